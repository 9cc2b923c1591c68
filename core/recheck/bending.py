"""Bending per region (CSA O86-19 7.5.6 glulam, 6.5.3 sawn lumber): Mr, KL and the governing case.

The search over load cases works on plain numbers: a region's resistance depends only on KD, the moment
sign, its compression edge and (glulam) its length, so it is computed once per such key and reused; the
trace is built only for the governing case of each region.
"""

from __future__ import annotations

from functools import partial
from typing import Any, NamedTuple

from core.analysis import BeamModel, Region
from core.assembled import assembled
from core.clauses.bending import glulam_bending_strength_for_face, glulam_mr, sawn_mr, size_factor_kzbg
from core.clauses.factors import factored_bending_strength_fb
from core.clauses.outcomes import NotPermitted
from core.clauses.stability import (
    KLRegime,
    critical_slenderness_ck,
    effective_length_le,
    glulam_db_waives_stability,
    lateral_stability_kl,
    lumber_db_limit,
    slenderness_cb,
)
from core.edges import EdgeSupport, compression_edge, rotation_how, unrestrained_elements
from core.effective_length import chosen_row
from core.kinds import Edge, ElementKind, MomentSign, Outcome, TraceStatus
from core.member import Member
from core.models import Beam, Material, NegativeLu, TopStamp
from core.recheck.cases import LoadCase, carries_snow
from core.recheck.trace import (
    KNM_PER_NMM,
    Lines,
    add_kd,
    case_label,
    dead_load_line,
    grade_line,
    kept,
    lines_for,
    note,
)
from core.results import BendingRegion, FactorTrace, RowUsed


def region_name(model: BeamModel, region: Region) -> str:
    """A stable name for a region: 'span 2', 'support 2', 'supports 2-3', 'overhang left'."""
    if region.sign is MomentSign.positive:
        mid = 0.5 * (region.x0_mm + region.x1_mm)
        for el in model.elements:
            if el.x0_mm <= mid <= el.x1_mm:
                return el.name
    overhangs = [model.elements[e].name for e in region.elements if model.elements[e].kind is ElementKind.overhang]
    if overhangs:
        return " + ".join(overhangs)
    inside = [i + 1 for i, x in enumerate(model.support_x_mm) if region.x0_mm < x < region.x1_mm]
    if len(inside) == 1:
        return f"support {inside[0]}"
    if inside:
        return f"supports {inside[0]}-{inside[-1]}"
    return f"{model.elements[region.elements[0]].name} (hogging)"


def _face_strength(beam: Beam, member: Member, sign: MomentSign) -> tuple[float, str]:
    """Specified fb for the face in tension (glulam: by the top stamp) and its symbol, MPa."""
    if beam.material is Material.sawn:
        return member.fb_pos_mpa, "fb"
    return glulam_bending_strength_for_face(member.fb_pos_mpa, member.fb_neg_mpa, sign, beam.top_stamp)


def _head_trace(
    trace: Lines,
    beam: Beam,
    member: Member,
    region: Region,
    case: LoadCase,
    edge: EdgeSupport,
    fb_spec: float,
    face: str,
    fb: float,
) -> None:
    """The first trace lines of a bending check: KD, fb, Fb, Lu and the reviewer's option."""
    sawn = beam.material is Material.sawn
    add_kd(trace, case)
    trace.add(
        f"{face} ({region.sign} moment)",
        fb_spec,
        "CSA O86-19 Table 7.3 note" if not sawn else "CSA O86-19 Table 6.4",
        f"{beam.species} {beam.grade}" + ("" if sawn else f", installed with its TOP stamp {_STAMP[beam.top_stamp]}"),
        member.grade_status,
        "MPa",
        # sawn fb is read from the grade row itself: keyed to it, as fv and fcp are (strength_line), so the notice
        # lists that row once; glulam's face rule (Table 7.3 note, by the TOP stamp) is a row of its own
        row=grade_line(member).source if sawn else "",
    )
    if trace.kept:  # a formula line: it names no table row
        trace.add(
            "Fb",
            fb,
            "CSA O86-19 6.5.3.1 (memory)" if sawn else "CSA O86-19 7.5.6.5.1",
            f"Fb = fb (KD KH KSb KT) = {fb_spec:g} x {case.kd:g} x {member.kh:g} x {member.ksb:g} x {member.kt:g}",
            TraceStatus.formula,
            "MPa",
        )
    # sawn lumber needs no Lu within its d/b tier (KL = 1) and writes its own past it (LU_RULE_SAWN): one Lu line
    if not sawn:
        rule = LU_RULE_TOP if edge.edge is Edge.top else LU_RULE_BOTTOM
        lu: float | str = "held continuously" if edge.continuous else round(edge.lu_mm)
        trace.add("Lu", lu, "", edge.description, edge.status, "" if edge.continuous else "mm", row=rule)
    if edge.option:
        trace.add("option", edge.option, "", "chosen by the reviewer", TraceStatus.input)


def _member_mr(beam: Beam, member: Member, fb: float, kzbg: float | None, kl: float) -> float:
    """Mr of the member, N*mm (CSA O86-19 6.5.3.1 sawn, 7.5.6.5.1 glulam)."""
    if beam.material is Material.sawn:
        return sawn_mr(fb, member.s_mm3, member.kzb or 1.0, kl)
    assert kzbg is not None
    return glulam_mr(fb, member.s_mm3, 1.0, kzbg, kl)


def bending_check(
    beam: Beam,
    member: Member,
    model: BeamModel,
    region: Region,
    case: LoadCase,
    edge: EdgeSupport,
    not_established: bool,
    trace: Lines | None,
    known: tuple[float | NotPermitted, dict[str, Any]] | None = None,
) -> dict[str, Any]:
    """Mr and utilisation of one region under one load case (numbers; trace appended if given).

    known: for a region the load-case search ranked without a trace, what ``_stability_kl`` gave for its
    key there (KL and the numbers it wrote): the same call with the same arguments, not made again.
    """
    sawn = beam.material is Material.sawn
    fb_spec, face = _face_strength(beam, member, region.sign)
    fb = factored_bending_strength_fb(fb_spec, case.kd, member.kh, member.ksb, member.kt)
    out: dict[str, Any] = {
        "lu_mm": None if edge.continuous else edge.lu_mm,
        "le_mm": None,
        "le_factor": None,
        "cb": None,
        "ck": None,
        "kl": None,
        "kzbg": None,
        "kzb": member.kzb,
        "fb_mpa": fb,
        "kd": case.kd,
        "mr_knm": None,
        "mf_knm": region.m_max_nmm * KNM_PER_NMM,
        "utilisation": None,
        "compression_edge_unbraced": edge.unbraced,
        "dead_load_only": case.combo.dead_load_only,
        "snow_in_combination": carries_snow(case, beam),
    }
    if trace is not None:
        _head_trace(trace, beam, member, region, case, edge, fb_spec, face, fb)
    if not sawn:
        out["kzbg"] = _kzbg(beam, region, trace)
    if not_established:
        out["outcome"] = Outcome.not_established
        _upper_bound(beam, member, model, region, fb, out, trace)
        return out
    kl = _stability_kl(beam, member, edge, fb, out, trace) if known is None else _known_kl(out, *known)
    if isinstance(kl, NotPermitted):
        out["outcome"] = Outcome.not_permitted
        return out
    out["kl"] = kl
    mr = _member_mr(beam, member, fb, out["kzbg"], kl)
    out["mr_knm"] = mr * KNM_PER_NMM
    out["utilisation"] = region.m_max_nmm / mr if mr > 0 else float("inf")
    out["outcome"] = Outcome.overstress if out["utilisation"] > 1.0 else Outcome.ok
    if trace is not None:  # without a trace nothing is formatted
        trace.add(
            "Mr",
            mr * KNM_PER_NMM,
            _MR_CLAUSE_SAWN if sawn else "CSA O86-19 7.5.6.5.1",
            "phi Fb S KZb KL, phi = 0.9" if sawn else _GLULAM_MR,
            "formula",
            "kN·m",
        )
    return out


# the rules the Lu lines rest on (reference o86.md: the definition of Lu, Q3 and section 13), one row each
LU_RULE_TOP = (
    "Lu of a top edge in compression: the spacing of purlins or joists fastened to it, held continuously by "
    "fastened decking, else the distance between restrained bearings"
)
LU_RULE_BOTTOM = (
    "Lu of a bottom edge in compression: the distance between real restraints of that edge (bracing, restrained "
    "bearings); a point of zero moment is not a brace"
)
LU_RULE_SAWN = (
    "Lu of sawn lumber past its d/b tier: the spacing of the points that restrain rotation (bridging, blocking, "
    "restrained bearings), never zero"
)
_STAMP = {TopStamp.up: "up", TopStamp.down: "down", TopStamp.not_visible: "not seen"}  # the fb line's words
# the KL formula of each regime of CSA O86-19 7.5.6.4.4 (core.clauses.stability): the row the appendix lists
_KL_RULES = {
    KLRegime.short: f"regime {KLRegime.short}: KL = 1",
    KLRegime.intermediate: f"regime {KLRegime.intermediate}: KL = 1 - (CB/CK)^4 / 3",
    KLRegime.long: f"regime {KLRegime.long}: KL = 0.65 E KSE KT / (CB^2 Fb KX)",
}
KZBG_RULE = "KZbg = (130/b)^0.1 (610/d)^0.1 (9100/L)^0.1, at most 1.3, L between points of zero moment"
CB_LIMIT_RULE = "CB above 50: not permitted (no KL, the member is not accepted)"
_MR_CLAUSE_SAWN = "CSA O86-19 6.5.3.1 (memory)"  # the sawn Mr line's clause (reference o86.md section 2)
_GLULAM_MR = "lesser of phi Fb S KX KZbg and phi Fb S KX KL, phi = 0.9, KX = 1"  # the glulam Mr line's source


def _known_kl(out: dict[str, Any], kl: float | NotPermitted, wrote: dict[str, Any]) -> float | NotPermitted:
    """KL as ``_stability_kl`` gave it, and what it wrote into its numbers (``lu_mm`` only where it set one)."""
    for key, value in wrote.items():
        if key != "lu_mm" or value is not None:
            out[key] = value
    return kl


def _kzbg(beam: Beam, region: Region, trace: Lines | None) -> float:
    length = region.x1_mm - region.x0_mm  # Region.length_mm
    kzbg = size_factor_kzbg(beam.b_mm, beam.d_mm, length)
    if trace is not None:  # without a trace nothing is formatted
        trace.add(
            "KZbg",
            kzbg,
            "CSA O86-19 7.5.6.5.1",
            f"L = {length:.0f} mm between points of zero moment; cap 1.3" if trace.kept else "",
            "confirmed",
            row=KZBG_RULE,
        )
    return kzbg


def _upper_bound(
    beam: Beam,
    member: Member,
    model: BeamModel,
    region: Region,
    fb: float,
    out: dict[str, Any],
    trace: Lines | None,
) -> None:
    """What a not-established region would give if its bearings were restrained (an upper bound).

    KL from the recorded bracing of the compression edge, with the unrestrained bearings counted as
    restraints (CSA O86-19 7.5.6.3.1 is not met, so the real capacity is lower than this).
    """
    restrained_edge = compression_edge(beam, model, region, assume_restrained=True)
    scratch: dict[str, Any] = dict(out)
    # its Lu, Le, CB, CK and KL lines (and the table rows they rest on) are traced too, marked "(if restrained)",
    # so the bound printed on the notice can be followed to its clauses and its rows are acknowledged
    sub = None if trace is None else Lines(trace.rows)
    kl = _stability_kl(beam, member, restrained_edge, fb, scratch, sub)
    if trace is not None and sub is not None and trace.rows is None:
        for t in sub.lines:
            trace.add(f"{t.symbol} (if restrained)", t.value, t.clause, t.source, t.status.value, t.unit, t.row)
    if isinstance(kl, NotPermitted):
        note(trace, "Mr (if restrained)", None, kl.clause, f"not permitted even if restrained: {kl}", "formula")
        return
    mr = _member_mr(beam, member, fb, out["kzbg"], kl)
    out["kl_if_restrained"] = kl
    out["mr_if_restrained_knm"] = mr * KNM_PER_NMM
    out["utilisation_if_restrained"] = region.m_max_nmm / mr
    note(
        trace,
        "Mr (if restrained)",
        mr * KNM_PER_NMM,
        _MR_CLAUSE_SAWN if beam.material is Material.sawn else "CSA O86-19 7.5.6.5.1",
        f"upper bound: KL = {kl:.4f} with Lu = {scratch['lu_mm'] or 0:.0f} mm as if every bearing were restrained; "
        "the real capacity is lower (CSA O86-19 7.5.6.3.1 not met)",
        "formula",
        "kN·m",
    )


def _stability_kl(
    beam: Beam,
    member: Member,
    edge: EdgeSupport,
    fb: float,
    out: dict[str, Any],
    trace: Lines | None,
) -> float | NotPermitted:
    if beam.material is Material.sawn:
        return _sawn_kl(beam, member, edge, fb, out, trace)
    if glulam_db_waives_stability(beam.d_mm, beam.b_mm):
        if trace is not None:  # without a trace nothing is formatted
            db = f"d/b = {beam.d_mm / beam.b_mm:.2f} <= 2.5" if trace.kept else ""
            trace.add("KL", 1.0, "CSA O86-19 7.5.6.3.2", db, "memory", row="KL = 1 where d/b <= 2.5")
        return 1.0
    if edge.continuous:
        row = "KL = 1 where the compression edge is held continuously"
        note(trace, "KL", 1.0, "CSA O86-19 7.5.6.3", edge.description, "memory", row=row)
        return 1.0
    return _kl_from_lu(beam, member, edge, fb, member.e_mpa, edge.lu_mm, out, trace)


def _sawn_kl(
    beam: Beam,
    member: Member,
    edge: EdgeSupport,
    fb: float,
    out: dict[str, Any],
    trace: Lines | None,
) -> float | NotPermitted:
    """Sawn lumber: KL = 1 within its d/b tier (CSA O86-19 6.5.3.2.1), else the glulam method with E05."""
    db = beam.d_mm / beam.b_mm
    limit, need = lumber_db_limit(edge.purlins_in_line, edge.held_directly, edge.bridging, edge.both_edges)
    if db <= limit:
        row = f"KL = 1 where d/b <= {limit:g} ({need})"
        how = f"d/b = {db:.2f} <= {limit:g} ({need})" if kept(trace) else ""
        note(trace, "KL", 1.0, "CSA O86-19 6.5.3.2.1", how, "memory", row=row)
        return 1.0
    e = member.e05_mpa
    note(
        trace,
        "E05",
        e,
        "CSA O86-19 6.5.3.2",
        f"d/b = {db:.2f} > {limit:g}: glulam KL method with E05 (conservative choice)" if kept(trace) else "",
        "memory",
        row=f"past d/b {limit:g} ({need}): the glulam KL method with E05 (conservative choice)",
    )
    # reference o86.md section 13: past its tier, Lu is the spacing of the points that restrain
    # rotation as well as displacement (bridging, blocking, bearings), never zero for a held edge.
    lu = edge.lu_rotation_mm
    out["lu_mm"] = lu
    if trace is not None:
        how = rotation_how(beam, edge) if trace.kept else ""
        trace.add("Lu", round(lu), "CSA O86-19 6.5.3.2 (memory)", how, "memory", "mm", row=LU_RULE_SAWN)
    return _kl_from_lu(beam, member, edge, fb, e, lu, out, trace)


def _kl_from_lu(
    beam: Beam,
    member: Member,
    edge: EdgeSupport,
    fb: float,
    e: float,
    lu_mm: float,
    out: dict[str, Any],
    trace: Lines | None,
) -> float | NotPermitted:
    """KL by CSA O86-19 7.5.6.4 from an unsupported length (mm) and the modulus used (MPa)."""
    row, why = chosen_row(beam.le_case, edge.kind)
    factor = float(row["factor"])
    le = effective_length_le(factor, lu_mm)
    cb = slenderness_cb(le, beam.d_mm, beam.b_mm)
    ck = critical_slenderness_ck(e, member.kse, member.kt, fb)
    out.update(le_mm=le, le_factor=factor, cb=cb, ck=ck)
    if trace is not None:  # the load-case search keeps no trace: nothing formatted for it
        _slenderness_trace(trace, row, why, factor, le, cb, ck)
    stability = lateral_stability_kl(cb, ck, e, member.kse, member.kt, fb)
    if isinstance(stability, NotPermitted):
        note(trace, "KL", None, stability.clause, str(stability), "confirmed", row=CB_LIMIT_RULE)
        return stability
    if trace is not None:
        regime = f"regime {stability.regime}" if trace.kept else ""
        note(trace, "KL", stability.kl, "CSA O86-19 7.5.6.4.4", regime, "confirmed", row=_KL_RULES[stability.regime])
    return stability.kl


def _slenderness_trace(
    trace: Lines, row: dict[str, str], why: str, factor: float, le: float, cb: float, ck: float
) -> None:
    """The Le, CB and CK lines of a KL trace."""
    note(
        trace,
        "Le",
        le,
        "CSA O86-19 7.5.6.4.2 / Table 7.4",
        f"row {row['description']!r}: Le = {factor:g} Lu; {why}" if trace.kept else "",
        row["status"],
        "mm",
        row=f"row {row['description']!r}: Le = {factor:g} Lu",  # the row alone, without why it was chosen
    )
    note(trace, "CB", cb, "CSA O86-19 7.5.6.4.3", "CB = sqrt(Le d / b^2)", "confirmed")
    note(trace, "CK", ck, "CSA O86-19 7.5.6.4.4", "CK = sqrt(0.97 E KSE KT / (Fb KX))", "confirmed")


# the rank of a region's outcome in the search, worst highest: not established, not permitted, overstress, ok
_NOT_ESTABLISHED, _NOT_PERMITTED, _OVERSTRESS, _OK = 3, 2, 1, 0
# a ranker entry: Fb, KL (None: not permitted), Mr for sawn lumber, and (KL as found, the numbers it wrote)
_Entry = tuple[float, float | None, float | None, tuple[float | NotPermitted, dict[str, Any]]]


class _Ranker:
    """The rank of a region under a case, from numbers cached per key (no trace, no models).

    KL depends on KD (through Fb), the moment sign, the compression edge and whether the region is
    not established (its upper bound then uses the restrained edge), so it is found once per such key;
    Mr and the utilisation M / Mr are then the same arithmetic as ``bending_check`` (KZbg by the
    region's length for glulam), so the governing case found here is the one ``bending_check`` finds.
    """

    def __init__(self, beam: Beam, member: Member, model: BeamModel) -> None:
        self.beam, self.member, self.model = beam, member, model
        self.sawn = beam.material is Material.sawn

    def rank(self, region: list[Any], entry: _Entry, ne: bool) -> tuple[int, float]:
        """(outcome rank, utilisation; for a not-permitted region its moment in kN*m) of a region under a case.

        region: ``BeamModel.region_spans`` numbers [x0_mm, x1_mm, sign, m_max_nmm, elements];
        entry: ``entry`` of the region's key under the case's KD.
        """
        x0, x1, _, m, _ = region
        fb, kl, mr, _ = entry
        if kl is None:
            return (_NOT_ESTABLISHED if ne else _NOT_PERMITTED, m * KNM_PER_NMM)
        if mr is None:  # glulam: KZbg by the region's length (``_member_mr``'s glulam arithmetic)
            beam = self.beam
            mr = glulam_mr(fb, self.member.s_mm3, 1.0, size_factor_kzbg(beam.b_mm, beam.d_mm, x1 - x0), kl)
        if ne:
            return (_NOT_ESTABLISHED, m / mr)
        util = m / mr if mr > 0 else float("inf")
        return (_OVERSTRESS if util > 1.0 else _OK, util)

    def entry(self, span: list[Any], case: LoadCase, edge: EdgeSupport, ne: bool) -> _Entry:
        """(Fb, KL or None when not permitted, Mr for sawn lumber, (KL as found, numbers written)) of a key.

        span: the region's ``BeamModel.region_spans`` numbers. The key: KD, sign, edge, ne. The last item is
        what ``bending_check`` takes as ``known``.
        """
        fb, kl, wrote = self._stability(span, case, edge, ne)
        if isinstance(kl, NotPermitted):
            return fb, None, None, (kl, wrote)
        return fb, kl, _member_mr(self.beam, self.member, fb, None, kl) if self.sawn else None, (kl, wrote)

    def _stability(
        self, span: list[Any], case: LoadCase, edge: EdgeSupport, ne: bool
    ) -> tuple[float, float | NotPermitted, dict[str, Any]]:
        """(Fb in MPa, KL of the edge, or of the restrained edge for a not-established region, numbers written)."""
        beam, member = self.beam, self.member
        fb_spec, _ = _face_strength(beam, member, span[2])
        fb = factored_bending_strength_fb(fb_spec, case.kd, member.kh, member.ksb, member.kt)
        if ne:
            edge = compression_edge(beam, self.model, _region(span), assume_restrained=True)
        wrote: dict[str, Any] = {"lu_mm": None}
        return fb, _stability_kl(beam, member, edge, fb, wrote, None), wrote


def _region(span: list[Any]) -> Region:
    """The Region of ``BeamModel.region_spans`` numbers."""
    x0, x1, sign, m, elements = span
    return Region(x0, x1, sign, m, elements)


class _Key(NamedTuple):
    """What the search finds once per region key: the edge, whether not established, the name and ranks per KD."""

    edge: EdgeSupport
    ne: bool
    name: str | None  # None: a region in positive moment over several elements, named by its ends
    by_kd: dict[float, _Entry]  # ``_Ranker.entry`` per KD


class _Search:
    """The governing case of every named region: compression edges and names found once per key."""

    def __init__(self, beam: Beam, member: Member, model: BeamModel) -> None:
        self.beam, self.model = beam, model
        self.blocked = unrestrained_elements(beam, model)
        self.exact = beam.negative_lu is NegativeLu.zero_moment_point
        self.ranker = _Ranker(beam, member, model)
        self.keys: dict[tuple[Any, ...], _Key] = {}
        self.names: dict[tuple[Any, ...], str] = {}
        self.best: dict[str, tuple[tuple[int, float], list[Any], LoadCase, EdgeSupport, bool, _Entry]] = {}
        # each region's utilisation under 1.4D alone, where it has one, and where it was found
        self.dead: dict[str, tuple[float, list[Any], LoadCase, EdgeSupport, _Entry]] = {}

    def _key(self, span: list[Any]) -> _Key:
        """Edge, not-established flag and (when it rests on sign and elements alone) the name of a region key.

        The edge depends on the elements a region spans (and, for the zero-moment option, on its ends);
        the name of a region in negative moment, or within one element, rests on its elements alone (the
        supports strictly inside it are those between its elements); in positive moment over several
        elements it rests on where its middle falls (found per ends in ``_name``).
        """
        _, _, sign, _, elements = span
        region = _region(span)
        edge = compression_edge(self.beam, self.model, region)
        plain = len(elements) == 1 or sign is MomentSign.negative
        name = f"{region_name(self.model, region)}|{sign}" if plain or self.exact else None
        return _Key(edge, bool(self.blocked.intersection(elements)), name, {})

    def _name(self, span: list[Any]) -> str:
        """The name of a region in positive moment over several elements, found once per ends."""
        x0, x1, sign, _, elements = span
        name_key = (sign, elements, x0, x1)
        name = self.names.get(name_key)
        if name is None:
            name = self.names[name_key] = f"{region_name(self.model, _region(span))}|{sign}"
        return name

    def add(self, case: LoadCase) -> None:
        """Rank every region of one case and keep it where it governs its name so far."""
        best, keys, exact, ranker, kd = self.best, self.keys, self.exact, self.ranker, case.kd
        for span in self.model.region_spans(case.result):
            x0, x1, sign, _, elements = span
            key = (sign, elements, x0, x1) if exact else (sign, elements)
            hit = keys.get(key)
            if hit is None:
                hit = keys[key] = self._key(span)
            edge, ne, name, by_kd = hit
            entry = by_kd.get(kd)
            if entry is None:
                entry = by_kd[kd] = ranker.entry(span, case, edge, ne)
            rank = ranker.rank(span, entry, ne)
            if name is None:
                name = self._name(span)
            held = best.get(name)
            if held is None or rank > held[0]:
                best[name] = (rank, span, case, edge, ne, entry)
            if case.combo.dead_load_only and rank[0] in (_OK, _OVERSTRESS):
                held_dead = self.dead.get(name)
                if held_dead is None or rank[1] >= held_dead[0]:
                    self.dead[name] = (rank[1], span, case, edge, entry)


def _assembled_region(
    name: str,
    region: Region,
    case: LoadCase,
    clause: str,
    edge: EdgeSupport,
    trace: list[FactorTrace],
    numbers: dict[str, Any],
) -> BendingRegion:
    """The BendingRegion of a region's governing case, from ``bending_check``'s numbers (fields in order)."""
    return assembled(
        BendingRegion,
        {
            "region": name.split("|")[0],
            "sign": region.sign,
            "x_start_mm": region.x0_mm,
            "x_end_mm": region.x1_mm,
            "lu_mm": numbers["lu_mm"],
            "le_mm": numbers["le_mm"],
            "le_factor": numbers["le_factor"],
            "cb": numbers["cb"],
            "ck": numbers["ck"],
            "kl": numbers["kl"],
            "kzbg": numbers["kzbg"],
            "kzb": numbers["kzb"],
            "fb_mpa": numbers["fb_mpa"],
            "kd": numbers["kd"],
            "mr_knm": numbers["mr_knm"],
            "mf_knm": numbers["mf_knm"],
            "utilisation": numbers["utilisation"],
            "combination": case_label(case),
            "clause": clause,
            "outcome": numbers["outcome"],
            "compression_edge": edge.description,
            "compression_edge_unbraced": numbers["compression_edge_unbraced"],
            "dead_load_only": numbers["dead_load_only"],
            "snow_in_combination": numbers["snow_in_combination"],
            "dead_load_utilisation": numbers.get("dead_load_utilisation"),
            "trace": trace,
            "kl_if_restrained": numbers.get("kl_if_restrained"),
            "mr_if_restrained_knm": numbers.get("mr_if_restrained_knm"),
            "utilisation_if_restrained": numbers.get("utilisation_if_restrained"),
        },
    )


def _dead_load_numbers(
    beam: Beam, member: Member, model: BeamModel, at: tuple[float, list[Any], LoadCase, EdgeSupport, _Entry]
) -> str:
    """A region's numbers under 1.4D alone, in words.

    ``bending_check`` under the dead-load case (KD for permanent load), from what the search found for the
    region's key there.
    """
    _, span, case, edge, entry = at
    d = bending_check(beam, member, model, _region(span), case, edge, False, None, entry[3])
    size = f", KZbg {d['kzbg']:.3f}" if d["kzbg"] is not None else ""
    return (
        f"Mf {d['mf_knm']:.4g} kN·m vs Mr {d['mr_knm']:.4g} kN·m with KD {d['kd']:g}: Fb {d['fb_mpa']:.4g} MPa, "
        f"KL {d['kl']:.3f}{size}"
    )


def bending_regions(
    beam: Beam,
    member: Member,
    model: BeamModel,
    cases: list[LoadCase],
    *,
    traces: bool = True,
    rows: set[RowUsed] | None = None,
) -> list[BendingRegion]:
    """Governing bending check for every named region over all cases (traces: False builds none).

    rows: when given, the table rows of every region's trace (the member's rows and the governing case's
    lines, written as a traced recheck writes them) are added to it, and no trace is kept.
    """
    search = _Search(beam, member, model)
    for case in cases:
        search.add(case)
    out = []
    for name, (_, span, case, edge, ne, entry) in sorted(search.best.items(), key=lambda kv: kv[1][1][0]):
        region = _region(span)
        trace = lines_for(traces, rows)
        # without a trace, KL is what the search found for the region's key (a not-established region's
        # entry holds the restrained edge's KL, so its upper bound is found again for its own ends)
        known = None if trace is not None or ne else entry[3]
        numbers = bending_check(beam, member, model, region, case, edge, ne, trace, known)
        dead = search.dead.get(name)
        numbers["dead_load_utilisation"] = None if dead is None else dead[0]
        if rows is not None:
            rows.update(member.rows_used)  # the member's lines open every region's trace
        clause = "CSA O86-19 7.5.6.5.1, 7.5.6.4" if beam.material is Material.glulam else "CSA O86-19 6.5.3"
        if trace is not None and dead is not None:
            dead_load_line(trace, case, dead[0], clause, partial(_dead_load_numbers, beam, member, model, dead))
        trace_out = list(member.trace) + trace.lines if traces and trace is not None else []
        out.append(_assembled_region(name, region, case, clause, edge, trace_out, numbers))
    return out
