"""Findings from a recheck: stable codes, priorities, plain-words message and required action."""

from __future__ import annotations

from core import tables
from core.assembled import assembled
from core.clauses.stability import bearing_restraint_required
from core.kinds import FindingCode, MomentSign, Outcome
from core.member import Member
from core.models import Beam, DeadLoadPattern, Material, NegativeLu, Restraint, TopBracing, TopStamp, Use
from core.results import (
    PRIORITY_ORDER,
    BearingCheck,
    BendingRegion,
    DeflectionCheck,
    Finding,
    Priority,
    ShearCheck,
    Status,
    beyond_text,
    utilisation_text,
)

FINDING_CODES = tuple(code.value for code in FindingCode)  # kept for callers that list the codes

DEAD_MAKE_SAFE = (
    "Make safe now: the member is overstressed under its design dead load alone, taken as in place (how much of it "
    "is on the member now was not recorded); have it propped, place no more {permanent} on it, and tell the site "
    "superintendent today. "
)
# Snow is a load nobody on site can keep off a member (common practice: an overstress under a snow
# combination is made safe by shoring, not by an instruction not to load).
SNOW_RISK = "snow can load this member at any time and cannot be kept off it reliably"
SNOW_MAKE_SAFE = (
    f"Make safe now: {SNOW_RISK}; have it shored or propped today, whatever the forecast, and tell the site "
    "superintendent today. "
)
TOP_EDGE_REGION = "top edge"  # the region of the top-edge findings (core.remedies.once_corrected reads it)


def _finding(
    *, code: FindingCode, priority: Priority, message: str, action: str, clause: str, region: str | None = None
) -> Finding:
    """A Finding of these values (``core.assembled``: every value here is already of its field's type)."""
    return assembled(
        Finding,
        {"code": code, "priority": priority, "message": message, "action": action, "clause": clause, "region": region},
    )


def fails_under_dead_load(check: BendingRegion | ShearCheck | BearingCheck) -> bool:
    """True when a check fails under its dead load alone (1.4D), whichever combination governs it."""
    return check.dead_load_only or (check.dead_load_utilisation is not None and check.dead_load_utilisation > 1.0)


def dead_load_words(check: BendingRegion | ShearCheck | BearingCheck) -> str:
    """The sentence a failing check carries when the dead load alone fails it but another combination governs."""
    if check.dead_load_only or not fails_under_dead_load(check):
        return ""
    return (
        " Under its design dead load alone (1.4D) the utilisation is "
        f"{utilisation_text(check.dead_load_utilisation)}, before any "
        "live or snow load (that dead load is taken as in place: how much of it is on the member was not recorded)."
    )


def _permanent_load(beam: Beam) -> str:
    """The permanent load still to come on a member, in words, by what it supports."""
    if beam.use is Use.floor:
        return "finishes, partitions, stored material or other permanent load"
    return "finishes, roofing or other permanent load"


def keep_off(beam: Beam) -> str:
    """How an IMMEDIATE item on this member opens: keep loads off, or (a member under snow) shore it.

    Snow cannot be kept off a member (as for an overstress under snow: ``overstress_urgency``), so "keep
    loads off" is not a way to make safe a member whose loads include snow.
    """
    if beam.loads.snow_kn_m > 0:
        return f"Make safe now: {SNOW_RISK}; have it shored or propped now, keep every other load off it"
    return "Make safe now: keep loads off this beam"


def overstress_urgency(
    beam: Beam, dead_load_fails: bool, snow_in_combination: bool, action: str
) -> tuple[Priority, str]:
    """Priority and action of a strength overstress.

    Failing under dead load alone (1.4D), governing or not: immediate, with the propping instruction first
    (the member is overstressed as it stands). A governing combination with snow: immediate, with the
    shoring instruction first (a contractor cannot keep snow off). Otherwise before loading (the
    contractor controls the live load).
    """
    if dead_load_fails:
        return Priority.immediate, DEAD_MAKE_SAFE.format(permanent=_permanent_load(beam)) + action
    if snow_in_combination:
        return Priority.immediate, SNOW_MAKE_SAFE + action
    return Priority.before_loading, action


def _support_label(j: int, n: int) -> str:
    if j == 0:
        return "support 1 (left end)"
    if j == n - 1:
        return f"support {n} (right end)"
    return f"support {j + 1}"


def restraint_findings(beam: Beam) -> list[Finding]:
    """O86-19 7.5.6.3.1: bearings lacking restraint against lateral displacement or rotation."""
    if not bearing_restraint_required(beam.d_mm, beam.b_mm):
        return []
    out = []
    n = len(beam.bearings)
    for j, b in enumerate(beam.bearings):
        if b.lateral is Restraint.yes and b.rotation is Restraint.yes:
            continue  # both restraints seen: nothing missing or unseen
        missing = [k for k in ("lateral", "rotation") if getattr(b, k) is Restraint.no]
        unseen = [k for k in ("lateral", "rotation") if getattr(b, k) is Restraint.not_visible]
        if not missing and not unseen:
            continue
        where = _support_label(j, n)
        words = {"lateral": "lateral displacement", "rotation": "rotation (rolling over)"}
        if missing:
            what = " and ".join(words[k] for k in missing)
            message = (
                f"{beam.mark} at {where}: no restraint against {what}. d/b = {beam.d_mm / beam.b_mm:.1f} "
                "> 2.5, so the standard requires it; the beam's bending capacity cannot be established."
            )
            priority = Priority.immediate
            action = (
                f"{keep_off(beam)} and tell the site superintendent today. "
                "Install the bearing restraint shown on the drawings (blocking, side plates or strap) "
                "before any further loading; ask the engineer of record if none is detailed."
            )
        else:
            # not seen is taken as missing (the unfavourable case, reference ARCHITECTURE), so as urgent as missing
            what = " and ".join(words[k] for k in unseen)
            message = (
                f"{beam.mark} at {where}: restraint against {what} could not be seen, so it is taken as missing "
                f"(the unfavourable case). d/b = {beam.d_mm / beam.b_mm:.1f} > 2.5, so the standard requires it; "
                "the beam's bending capacity is not established until it is confirmed."
            )
            priority = Priority.immediate
            action = (
                f"{keep_off(beam)} until the restraint is confirmed, and tell the site superintendent today. "
                "Expose the bearing or send a photo so the reviewer can confirm it; if it is not there, install the "
                "restraint shown on the drawings (blocking, side plates or strap) before any further loading."
            )
        out.append(
            _finding(
                code=FindingCode.bearing_restraint_missing,
                priority=priority,
                message=message,
                action=action,
                clause="CSA O86-19 7.5.6.3.1",
                region=where,
            )
        )
    return out


def fails_in_bending(r: BendingRegion) -> bool:
    """True when a region fails in bending: over its resistance, not permitted, or failing even if restrained."""
    if r.outcome is Outcome.not_permitted:
        return True
    if r.outcome is Outcome.not_established:
        return r.utilisation_if_restrained is None or r.utilisation_if_restrained > 1.0
    return r.outcome is Outcome.overstress


FASTENING, STAMP = "fastening", "stamp"  # the keys of ``unseen_cases``


def unseen_cases(beam: Beam, member: Member, r: BendingRegion) -> dict[str, str]:
    """The unfavourable cases taken for what was not seen that a region's bending answer rests on, in words.

    Keyed FASTENING and STAMP.
    Purlin or decking fastening not recorded (taken as not fastened) matters only where the top edge is in
    compression (positive moment); the TOP stamp of an unbalanced layup not seen (the weaker face taken
    in tension) sets fb wherever the resistance is established or bounded (not for slenderness alone).
    """
    out = {}
    if r.sign is MomentSign.positive and beam.top_edge.fastened_assumed:
        out[FASTENING] = f"the {beam.top_edge.braced_by.value} taken as not fastened to the top edge"
    if r.outcome is not Outcome.not_permitted and _stamp_assumed(beam, member):
        out[STAMP] = "the weaker layup face taken in tension (TOP stamp not seen)"
    return out


def _stamp_assumed(beam: Beam, member: Member) -> bool:
    """True when an unbalanced glulam layup's TOP stamp was not seen (the weaker face is taken in tension)."""
    return beam.material is Material.glulam and not member.balanced and beam.top_stamp is TopStamp.not_visible


def _rests_on(cases: dict[str, str]) -> str:
    """The sentence a failing finding carries when its answer rests on cases taken for what was not seen."""
    if not cases:
        return ""
    return (
        f" This rests on cases taken for what was not seen: {' and '.join(cases.values())}; confirm "
        f"{'them all' if len(cases) > 1 else 'it'} and recheck before ordering a repair (findings below)."
    )


def failing_unseen(beam: Beam, member: Member, bending: list[BendingRegion]) -> list[dict[str, str] | None]:
    """Per region: the unseen cases its bending failure rests on (``unseen_cases``), or None where it does not fail."""
    return [unseen_cases(beam, member, r) if fails_in_bending(r) else None for r in bending]


def bending_findings(
    beam: Beam, member: Member, bending: list[BendingRegion], unseen: list[dict[str, str] | None] | None = None
) -> list[Finding]:
    """Overstress, slenderness over the limit and unbraced compression edges, per region.

    A failing region whose answer rests on an unfavourable case taken for what was not seen names it.
    unseen: ``failing_unseen`` of the regions, where the caller found it already (found here otherwise).
    """
    out = []
    for r, cases in zip(bending, failing_unseen(beam, member, bending) if unseen is None else unseen, strict=True):
        rests = "" if cases is None else _rests_on(cases)
        if r.outcome is Outcome.not_permitted:
            out.append(
                _finding(
                    code=FindingCode.slenderness_exceeds_limit,
                    priority=Priority.immediate,
                    region=r.region,
                    message=(
                        f"{beam.mark}, {r.region}: slenderness CB = {r.cb:.1f} exceeds 50 with the "
                        f"{r.compression_edge}; the standard does not permit this member as installed.{rests}"
                    ),
                    action=(
                        f"{keep_off(beam)} and tell the site superintendent today; have lateral bracing added to "
                        "the compression edge as directed by the engineer of record."
                    ),
                    clause="CSA O86-19 7.5.6.4.4",
                )
            )
        elif r.outcome is Outcome.overstress and r.utilisation is not None and r.mr_knm is not None:
            priority, action = overstress_urgency(
                beam,
                fails_under_dead_load(r),
                r.snow_in_combination,
                "Do not load beyond its present load; refer to the engineer of record for a repair, "
                "added bracing or a replacement member.",
            )
            out.append(
                _finding(
                    code=FindingCode.bending_overstress,
                    priority=priority,
                    region=r.region,
                    message=(
                        f"{beam.mark}, {r.region}: factored moment {r.mf_knm:.1f} kN·m exceeds the "
                        f"resistance {r.mr_knm:.1f} kN·m "
                        f"(utilisation {utilisation_text(r.utilisation)}, {r.combination})."
                        f"{dead_load_words(r)}{rests}"
                    ),
                    action=action,
                    clause=r.clause,
                )
            )
        upper = r.utilisation_if_restrained  # None: not permitted (CB > 50) even with restrained bearings
        if r.outcome is Outcome.not_established and (upper is None or upper > 1.0):
            bound = (
                f"even if its bearings were restrained the resistance would be only {r.mr_if_restrained_knm:.1f} kN·m "
                f"against a factored moment of {r.mf_knm:.1f} kN·m "
                f"(utilisation {utilisation_text(upper)}, {r.combination})"
                if r.mr_if_restrained_knm is not None
                else "even if its bearings were restrained the slenderness would exceed the limit"
            )
            out.append(
                _finding(
                    code=FindingCode.bending_overstress,
                    priority=Priority.immediate,
                    region=r.region,
                    message=(
                        f"{beam.mark}, {r.region}: {bound}. The real capacity is lower still, because the bearing "
                        f"restraint is missing.{rests}"
                    ),
                    action=(
                        f"{keep_off(beam)} and tell the site superintendent today; refer to the engineer of record "
                        "for bearing restraint and a repair or replacement member."
                    ),
                    clause=r.clause,
                )
            )
        stability_governs = (r.kl is not None and r.kzbg is not None and r.kl < r.kzbg) or (
            r.kl is not None and r.kzbg is None and r.kl < 1.0
        )
        if r.sign is MomentSign.negative and r.compression_edge_unbraced and stability_governs:
            over = r.utilisation is not None and r.utilisation > 1.0
            out.append(
                _finding(
                    code=FindingCode.compression_edge_unbraced,
                    region=r.region,
                    priority=Priority.before_loading if over else Priority.observation,
                    message=(
                        f"{beam.mark}, {r.region}: the bottom edge is in compression here and is not braced "
                        f"(KL = {r.kl:.3f}); lateral stability governs this region."
                    ),
                    action=(
                        "Add bottom-edge bracing (knee braces or blocking to the bottom edge) as directed by "
                        "the engineer of record."
                        if over
                        else "Record; bottom-edge bracing would raise the capacity of this region."
                    ),
                    clause="CSA O86-19 7.5.6.4",
                )
            )
    return out


RESTS_ON_IT = (
    "Confirm before loading, with every other case the bending failure of this beam names: the failure was found "
    "with them all taken unfavourably, so it may clear only when they are confirmed and the beam is rechecked. "
)


def assumed_findings(beam: Beam, failure_rests_on_fastening: bool = False) -> list[Finding]:
    """Inputs that change the answer and were not recorded: the unfavourable case was taken (say so).

    failure_rests_on_fastening: a failing bending region rests on the purlins or decking taken as not
    fastened, so confirming them is as urgent as loading (before loading, not an observation).
    """
    out = []
    if beam.top_edge.fastened_assumed:
        record = "Record whether the purlins or decking are fastened; the recheck may then improve."
        out.append(
            _finding(
                code=FindingCode.input_assumed,
                priority=Priority.before_loading if failure_rests_on_fastening else Priority.observation,
                region=TOP_EDGE_REGION,
                message=(
                    f"{beam.mark}: whether the {beam.top_edge.braced_by.value} are fastened to the top edge was not "
                    "recorded; the recheck assumed they are not (top edge unbraced between bearings)."
                ),
                action=(RESTS_ON_IT + record) if failure_rests_on_fastening else record,
                clause="CSA O86-19 7.5.6.4.1",
            )
        )
    if beam.use is None:
        out.append(
            _finding(
                code=FindingCode.input_assumed,
                priority=Priority.observation,
                message=(
                    f"{beam.mark}: what the member supports (use) was not recorded; the recheck held the deflection "
                    "to the strictest limit of the table (L/360)."
                ),
                action="Record the use (floor, roof with plaster ceiling, other ceiling, no ceiling).",
                clause="NBC Table 9.4.3.1",
            )
        )
    return out


def uplift_findings(beam: Beam, bearing: list[BearingCheck]) -> list[Finding]:
    """Negative factored reactions (NBC 0.9D where dead load counteracts): a hold-down is needed."""
    out = []
    for b in bearing:
        if b.uplift_kn is None:
            continue
        now = (
            f" Under specified loads (no load factor) it still lifts by {b.uplift_specified_kn:.1f} kN, so without "
            "a hold-down the member lifts off this bearing in service."
            if b.uplift_specified_kn is not None
            else ""
        )
        hold = "hold the member down at this support (or shore the parts that lift it)"
        if b.lifts_now:
            now = " The specified dead load alone already lifts it off this bearing."
            action = f"Make safe now: prop or {hold} and tell the site superintendent today; "
        elif b.uplift_snow:  # snow cannot be kept off (as for an overstress under snow: overstress_urgency)
            action = f"Make safe now: snow can load this member at any time; {hold} today, whatever the forecast, "
            action += "and tell the site superintendent today; "
        else:
            action = "Confirm a hold-down for the uplift before loading; "
        out.append(
            _finding(
                code=FindingCode.uplift_at_support,
                priority=Priority.immediate if b.lifts_now or b.uplift_snow else Priority.before_loading,
                region=f"support {b.support}",
                message=(
                    f"{beam.mark} at support {b.support}: factored uplift {b.uplift_kn:.1f} kN "
                    f"({b.uplift_combination}); the bearing must hold the member down.{now}"
                ),
                action=action + "refer the hold-down to the engineer of record.",
                clause="NBC 4.1.3.2 (0.9D where dead load counteracts)",
            )
        )
    return out


def option_findings(beam: Beam) -> list[Finding]:
    """Modelling options the reviewer chose instead of the conservative default (named on the notice)."""
    out = []
    if beam.negative_lu is NegativeLu.zero_moment_point:
        out.append(
            _finding(
                code=FindingCode.modelling_option,
                priority=Priority.observation,
                message=(
                    f"{beam.mark}: the reviewer took points of zero moment as braces of the bottom edge "
                    "(not the default: a point of zero moment is not a lateral support)."
                ),
                action="The engineer of record accepts or rejects this option.",
                clause="CSA O86-19 7.5.6.4",
            )
        )
    if beam.dead_load_pattern is DeadLoadPattern.uniform:
        out.append(
            _finding(
                code=FindingCode.modelling_option,
                priority=Priority.observation,
                message=(
                    f"{beam.mark}: the reviewer applied one dead-load factor to the whole beam (not the default: "
                    "0.9D on the parts that relieve the effect and 1.25D on the rest)."
                ),
                action="The engineer of record accepts or rejects this option.",
                clause="NBC 4.1.3.2",
            )
        )
    return out


def top_edge_findings(beam: Beam) -> list[Finding]:
    """Purlins or decking logged but not yet fastened: the top edge is treated as unbraced."""
    top = beam.top_edge
    if not top.left_unfastened:
        return []
    what = "the purlins are" if top.braced_by is TopBracing.purlins else "the decking is"
    return [
        _finding(
            code=FindingCode.compression_edge_unbraced,
            priority=Priority.before_loading,
            region=TOP_EDGE_REGION,
            message=(
                f"{beam.mark}: {what} not fastened to the top edge, so the compression edge is not braced; the "
                "recheck treats the top edge as unbraced between supports."
            ),
            action=f"Fasten the {top.braced_by.value} as detailed before {_further_load(beam)} is placed.",
            clause="CSA O86-19 7.5.6.4.2" if beam.material is Material.glulam else "CSA O86-19 6.5.3.2.1",
        )
    ]


def _further_load(beam: Beam) -> str:
    """The loads still to come on a member, in words, by what it supports (use) and its logged loads."""
    if beam.use is Use.floor:
        return "any floor finish, stored material or other load"
    if beam.use is not None or beam.loads.snow_kn_m > 0:
        return "any roofing material or snow load"
    return "any further load (roofing, flooring, stored material or snow)"


def layup_findings(beam: Beam, member: Member, failure_rests_on_stamp: bool = False) -> list[Finding]:
    """Unbalanced glulam installed with the TOP stamp down, or orientation not confirmed.

    failure_rests_on_stamp: a failing bending region rests on the weaker face taken in tension, so
    confirming the stamp comes before loading, not at the next review.
    """
    if beam.material is not Material.glulam or member.balanced or beam.top_stamp is TopStamp.up:
        return []
    if beam.top_stamp is TopStamp.down:
        return [
            _finding(
                code=FindingCode.layup_inverted,
                priority=Priority.before_loading,
                message=(
                    f"{beam.mark}: unbalanced layup {beam.grade} installed with its TOP stamp down; the weaker "
                    f"face is in tension (fb {member.fb_neg_mpa:g} MPa instead of {member.fb_pos_mpa:g})."
                ),
                action="Refer to the engineer of record: turn or replace the beam, or accept it by analysis.",
                clause="CSA O86-19 Table 7.3 note",
            )
        ]
    confirm = "Confirm the TOP stamp orientation (photo) at the next review."
    return [
        _finding(
            code=FindingCode.layup_inverted,
            priority=Priority.before_loading if failure_rests_on_stamp else Priority.before_next_review,
            message=(
                f"{beam.mark}: TOP stamp of the unbalanced layup {beam.grade} not seen or not recorded; the "
                "recheck assumed the weaker face in tension."
            ),
            action=(RESTS_ON_IT + "Confirm the TOP stamp orientation (photo).") if failure_rests_on_stamp else confirm,
            clause="CSA O86-19 Table 7.3 note",
        )
    ]


def check_findings(
    beam: Beam, shear: ShearCheck, bearing: list[BearingCheck], deflection: DeflectionCheck
) -> list[Finding]:
    """Shear, bearing and deflection over their limits."""
    out = []
    if shear.utilisation > 1.0:
        priority, action = overstress_urgency(
            beam,
            fails_under_dead_load(shear),
            shear.snow_in_combination,
            "Refer to the engineer of record before further loading.",
        )
        out.append(
            _finding(
                code=FindingCode.shear_overstress,
                priority=priority,
                message=(
                    f"{beam.mark}: total factored load {shear.vf_kn:.1f} kN exceeds the shear resistance Wr "
                    f"{shear.vr_kn:.1f} kN of the volume method (utilisation {utilisation_text(shear.utilisation)}, "
                    f"{shear.combination}).{dead_load_words(shear)}"
                    if shear.volume_method
                    else f"{beam.mark}: factored shear {shear.vf_kn:.1f} kN exceeds the resistance "
                    f"{shear.vr_kn:.1f} kN (utilisation {utilisation_text(shear.utilisation)}, {shear.combination})."
                    f"{dead_load_words(shear)}"
                ),
                action=action,
                clause=shear.clause,
            )
        )
    for b in bearing:
        if b.utilisation > 1.0:
            priority, action = overstress_urgency(
                beam,
                fails_under_dead_load(b),
                b.snow_in_combination,
                "Lengthen the bearing or add a bearing plate as directed by the engineer of record.",
            )
            out.append(
                _finding(
                    code=FindingCode.bearing_overstress,
                    priority=priority,
                    region=f"support {b.support}",
                    message=(
                        f"{beam.mark} at support {b.support}: factored reaction {b.qf_kn:.1f} kN exceeds the bearing "
                        f"resistance {b.qr_kn:.1f} kN over {b.length_mm:g} mm "
                        f"(utilisation {utilisation_text(b.utilisation)})."
                        f"{dead_load_words(b)}"
                    ),
                    action=action,
                    clause=b.clause,
                )
            )
    if deflection.utilisation > 1.0:
        shown = beyond_text(deflection.delta_mm, deflection.limit_mm, "mm")
        out.append(
            _finding(
                code=FindingCode.deflection_exceeds_limit,
                priority=Priority.before_next_review,
                region=deflection.element,
                message=(
                    f"{beam.mark}, {deflection.element}: deflection under {deflection.case} "
                    f"{shown[0]} exceeds the limit {shown[1]} "
                    f"(L/{deflection.limit_ratio:g})."
                ),
                action="Refer to the engineer of record (serviceability).",
                clause=deflection.clause,
            )
        )
    return out


def size_findings(beam: Beam) -> list[Finding]:
    """Measured member against the drawings: undersize beyond tolerance, or a different member."""
    spec = beam.specified
    if spec is None:
        return []
    out = []
    if (spec.species, spec.grade) != (beam.species, beam.grade):
        out.append(
            _finding(
                code=FindingCode.substitution,
                priority=Priority.before_next_review,
                message=(
                    f"{beam.mark}: drawings specify {spec.species} {spec.grade}; installed {beam.species} "
                    f"{beam.grade}. The recheck uses the installed grade."
                ),
                action="Submit the substitution to the engineer of record for acceptance, or replace the member.",
                clause="CSA O86-19 Table 7.3 / 6.4",
            )
        )
    short_b, short_d = spec.b_mm - beam.b_mm, spec.d_mm - beam.d_mm
    if beam.material is Material.glulam:
        widths = [float(w) for w in tables.column("glulam_sizes", "width_mm")]
        smaller_width = any(abs(beam.b_mm - w) <= beam.size_tolerance_mm for w in widths if w < spec.b_mm - 1)
        lam_short = short_d >= 38 - beam.size_tolerance_mm
        if smaller_width or lam_short:
            out.append(
                _finding(
                    code=FindingCode.substitution,
                    priority=Priority.before_next_review,
                    message=(
                        f"{beam.mark}: measured {beam.b_mm:g} x {beam.d_mm:g} mm against {spec.b_mm:g} x "
                        f"{spec.d_mm:g} mm specified: a smaller standard glulam size was installed."
                    ),
                    action="Submit to the engineer of record for acceptance of the as-built member, or replace it.",
                    clause="CWC glulam sizes; CSA O86-19 7.5.6.5",
                )
            )
            return out
    if short_b > beam.size_tolerance_mm or short_d > beam.size_tolerance_mm:
        out.append(
            _finding(
                code=FindingCode.undersize,
                priority=Priority.before_next_review,
                message=(
                    f"{beam.mark}: measured {beam.b_mm:g} x {beam.d_mm:g} mm against {spec.b_mm:g} x {spec.d_mm:g} mm "
                    f"specified (tolerance {beam.size_tolerance_mm:g} mm). The recheck uses the measured size."
                ),
                action="Refer the as-built size to the engineer of record.",
                clause="project setting (CSA O122 tolerances not yet checked)",
            )
        )
    return out


def build_findings(
    beam: Beam,
    member: Member,
    bending: list[BendingRegion],
    shear: ShearCheck,
    bearing: list[BearingCheck],
    deflection: DeflectionCheck,
) -> list[Finding]:
    """Every finding of a recheck, most urgent first.

    An unfavourable case taken for what was not seen that a bending failure rests on is ranked before
    loading, and the failure names it (``unseen_cases``).
    """
    unseen = failing_unseen(beam, member, bending)  # found once: for the ranks below and the failures' words
    rests = {c for cases in unseen if cases is not None for c in cases}
    found = (
        restraint_findings(beam)
        + bending_findings(beam, member, bending, unseen)
        + top_edge_findings(beam)
        + layup_findings(beam, member, STAMP in rests)
        + check_findings(beam, shear, bearing, deflection)
        + uplift_findings(beam, bearing)
        + size_findings(beam)
        + assumed_findings(beam, FASTENING in rests)
        + option_findings(beam)
    )
    return sorted(found, key=lambda f: PRIORITY_ORDER[f.priority])  # a StrEnum member finds its value's entry


def overall_status(bending: list[BendingRegion], findings: list[Finding]) -> Status:
    """not_established > not_permitted > deficient (any finding to act on) > ok."""
    outcomes = {r.outcome for r in bending}  # Outcome members (a StrEnum: equal to and hashed as their values)
    if Outcome.not_established in outcomes:
        return Status.not_established
    if Outcome.not_permitted in outcomes:
        return Status.not_permitted
    if any(f.priority is not Priority.observation for f in findings):
        return Status.deficient
    return Status.ok
