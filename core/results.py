"""Recheck results (contract 1 output) with the trace of every factor used."""

from __future__ import annotations

from collections.abc import Iterable
from enum import StrEnum
from typing import Any

from pydantic import BaseModel, ConfigDict

from core.kinds import FindingCode, MomentSign, Outcome, TraceStatus
from core.models import Material

# What the recheck covers, stated wherever its results are (a roof beam's uplift under wind, a point load
# from equipment, a connection: none is rechecked, and a result must not be read as if it were)
SCOPE = (
    "The recheck covers gravity line loads only (dead, live and snow); wind, earthquake, point loads and "
    "connections are not checked."
)
CAUTION = (
    "bracewalk is a recording and recheck aid for a qualified reviewer. Results are advisory and "
    "support, never replace, the judgement of the engineer of record, who decides repairs and "
    f"substitutions. Local codes and licensed practice govern. {SCOPE} Table values marked 'memory' have "
    "not been checked against the standard's text."
)


# The version of what a recheck prints. Bump it with every change that may change a recheck's output (the
# golden digests, tests/core/golden_versions.txt, refuse a rewrite under the same version): stored results
# of another version are recomputed when a database is opened (storage.results).
RESULTS_VERSION = 23


def utilisation_text(u: float | None) -> str:
    """A utilisation to two decimals, or to as many more as it takes to show its side of 1.00 (dimensionless).

    1.0012 prints '1.001', not '1.00' beside the word FAILS; 0.9996 prints '1.00', which passes (at most 1.00).
    None (no utilisation: not established) prints '-'.
    """
    if u is None:
        return "-"
    for places in (2, 3, 4, 5, 6):
        text = f"{u:.{places}f}"
        if (u > 1.0) == (float(text) > 1.0):
            return text
    return repr(u)


def beyond_text(value: float, limit: float, unit: str) -> tuple[str, str]:
    """A value past its limit and the limit, to one decimal, or more where one would print them equal."""
    for places in (1, 2, 3):
        a, b = f"{value:.{places}f}", f"{limit:.{places}f}"
        if a != b:
            return f"{a} {unit}", f"{b} {unit}"
    return f"{value!r} {unit}", f"{limit!r} {unit}"


class Out(BaseModel):
    """Base for results: frozen."""

    model_config = ConfigDict(frozen=True)


class Status(StrEnum):
    """Overall outcome of a recheck."""

    ok = "ok"
    deficient = "deficient"
    not_permitted = "not_permitted"
    not_established = "not_established"


class Priority(StrEnum):
    """How soon a finding must be acted on (most urgent first)."""

    immediate = "immediate"
    before_loading = "before_loading"
    before_next_review = "before_next_review"
    observation = "observation"


PRIORITY_ORDER = {p.value: i for i, p in enumerate(Priority)}


class FactorTrace(Out):
    """Where one number came from."""

    symbol: str
    value: float | str | None
    unit: str = ""
    clause: str = ""
    source: str = ""
    status: TraceStatus = TraceStatus.formula
    # the rule this line rests on, in words the same for every beam, where its source also tells this beam's
    # numbers or record ("d/b = 2.64 <= 6.5 (...)"): the row a reviewer acknowledges is the rule, once
    row: str = ""


# a table row (or tabulated rule) a recheck used, as its trace line names it: (clause, row or else source,
# status); the statuses that mark such a line: verified, confirmed or memory (formula and input lines rest on
# no table)
RowUsed = tuple[str, str, TraceStatus]
TABLE_STATUSES = frozenset((TraceStatus.verified, TraceStatus.confirmed, TraceStatus.memory))


def trace_rows(trace: Iterable[FactorTrace]) -> set[RowUsed]:
    """The table rows named by trace lines: (clause, row or source, status) of each verified, confirmed, memory line."""
    return {(t.clause, t.row or t.source, t.status) for t in trace if t.status in TABLE_STATUSES}


class BendingRegion(Out):
    """Bending check of one region between points of zero moment, governing combination."""

    region: str
    sign: MomentSign
    x_start_mm: float
    x_end_mm: float
    lu_mm: float | None
    le_mm: float | None
    le_factor: float | None
    cb: float | None
    ck: float | None
    kl: float | None
    kzbg: float | None = None
    kzb: float | None = None
    fb_mpa: float
    kd: float
    mr_knm: float | None
    mf_knm: float
    utilisation: float | None
    combination: str
    clause: str
    outcome: Outcome
    compression_edge: str  # in words, for people; decisions use the flags below
    compression_edge_unbraced: bool = False  # nothing braces the compression edge between its restraints
    dead_load_only: bool = False  # the governing combination is dead load alone (1.4D, permanent KD)
    snow_in_combination: bool = False  # the governing combination includes snow (nobody on site can keep it off)
    # the utilisation under the dead load alone (1.4D, permanent KD) where it was found, governing or not:
    # over 1.0 the member is overstressed as it stands, whatever combination governs
    dead_load_utilisation: float | None = None
    trace: list[FactorTrace]
    # not established only: what the member would give if its bearings were restrained (an upper bound;
    # the real capacity is lower). None when even that is not permitted (CB > 50; said in the trace).
    kl_if_restrained: float | None = None
    mr_if_restrained_knm: float | None = None
    utilisation_if_restrained: float | None = None


# the method of a glulam shear check by volume (CSA O86-19 7.5.7.3(a)): the total factored load W against Wr
VOLUME_METHOD = "volume: Wr vs total factored load W (Z >= 2.0 m3)"


class ShearCheck(Out):
    """Shear check, governing combination."""

    vr_kn: float
    vf_kn: float
    utilisation: float
    method: str
    combination: str
    kd: float
    clause: str
    trace: list[FactorTrace]
    dead_load_only: bool = False  # the governing combination is dead load alone (1.4D, permanent KD)
    snow_in_combination: bool = False  # the governing combination includes snow (nobody on site can keep it off)
    # the utilisation under the dead load alone (1.4D, permanent KD) where it was found, governing or not:
    # over 1.0 the member is overstressed as it stands, whatever combination governs
    dead_load_utilisation: float | None = None

    @property
    def volume_method(self) -> bool:
        """True when the glulam volume method (CSA O86-19 7.5.7.3(a)) set the total factored load W against Wr."""
        return self.method == VOLUME_METHOD


class BearingCheck(Out):
    """Bearing (compression perpendicular to grain) at one support."""

    support: int
    qr_kn: float
    qf_kn: float
    utilisation: float
    length_mm: float
    combination: str
    clause: str
    trace: list[FactorTrace]
    uplift_kn: float | None = None  # largest factored uplift (negative reaction), kN; None when none
    uplift_combination: str | None = None
    lifts_now: bool = False  # the specified dead load alone already lifts the member off this bearing
    uplift_specified_kn: float | None = None  # largest uplift under specified D + L + S (L, S on the worst parts)
    uplift_snow: bool = False  # the combination of the largest factored uplift includes snow
    dead_load_only: bool = False  # the governing combination is dead load alone (1.4D, permanent KD)
    snow_in_combination: bool = False  # the governing combination includes snow (nobody on site can keep it off)
    # the utilisation under the dead load alone (1.4D, permanent KD) where it was found, governing or not:
    # over 1.0 the member is overstressed as it stands, whatever combination governs
    dead_load_utilisation: float | None = None


class DeflectionCheck(Out):
    """Governing deflection check (specified loads)."""

    delta_mm: float
    limit_mm: float
    limit_ratio: float  # the limit is the deflection span / this ratio (L/360 -> 360)
    utilisation: float
    case: str  # the specified-load case: "L + S", "D + L + S" or the long-term dead load
    element: str
    clause: str
    trace: list[FactorTrace]


class Finding(Out):
    """Something the reviewer must act on or record."""

    code: FindingCode
    priority: Priority
    message: str
    action: str
    clause: str
    region: str | None = None


def governing_check(
    bending: list[BendingRegion], shear: ShearCheck, bearing: list[BearingCheck], deflection: DeflectionCheck
) -> tuple[int, float | None]:
    """The check that governs: its index in [bending regions..., shear, bearings..., deflection], utilisation.

    A bending region whose capacity is not established or not permitted has no utilisation and governs over
    every rated check (not established before not permitted, as the status ranks them), with None: no
    reassuring number stands for a member whose capacity is unknown. Otherwise the largest utilisation
    governs (the last of equals: the right-hand bearing of a symmetric beam).
    """
    from core.governing import governing  # compiled with the recheck's modules; it reads this module's models

    return governing(bending, shear, bearing, deflection)


class Recheck(Out):
    """The full recheck of one beam."""

    mark: str
    status: Status
    bending: list[BendingRegion]
    shear: ShearCheck
    bearing: list[BearingCheck]
    deflection: DeflectionCheck
    findings: list[Finding]
    governing_utilisation: float | None
    material: str
    caution: str = CAUTION

    def to_json_dict(self) -> dict[str, Any]:
        """The contract-1 JSON object: sawn regions carry ``kzb``, glulam regions ``kzbg``."""
        data = self.model_dump(mode="json")
        drop = "kzbg" if self.material == Material.sawn else "kzb"
        for region in data["bending"]:
            region.pop(drop, None)
        return data


def rows_used(result: Recheck) -> frozenset[RowUsed]:
    """Every table row a traced recheck used: the rows of every trace line of every check.

    A status-only recheck keeps no trace: ``core.recheck.recheck_with_rows`` gives the same set without one.
    """
    rows: set[RowUsed] = set()
    for region in result.bending:
        rows |= trace_rows(region.trace)
    rows |= trace_rows(result.shear.trace)
    for bearing in result.bearing:
        rows |= trace_rows(bearing.trace)
    rows |= trace_rows(result.deflection.trace)
    return frozenset(rows)


class CheckKind(StrEnum):
    """Which check a recheck line reports."""

    bending = "bending"
    shear = "shear"
    bearing = "bearing"
    deflection = "deflection"


class CheckLine(Out):
    """One check of a recheck in the words every output prints (app panel, text, notice, recheck sheet).

    Demand and capacity carry their symbol and unit ("Mf 86.2 kN·m", "Mr 120.4 kN·m"); ``utilisation``
    is demand over capacity (None when the capacity is not established or not permitted: taken as failing).
    """

    kind: CheckKind
    key: str  # "bending0", "shear", "bearing1", "deflection": the check whose trace the line opens
    name: str  # "bending, span 1 (positive moment)"
    demand: str
    capacity: str
    utilisation: float | None
    clause: str
    factors: str = ""  # what the capacity rests on: "Lu 2400 mm, CB 11.15, KL 0.969, KZbg 1.091"; method; length
    combination: str = ""  # the governing load combination (deflection: the specified-load case)


def _opt(x: float | None, fmt: str) -> str:
    return "n/a" if x is None else format(x, fmt)


def _bending_capacity(r: BendingRegion) -> str:
    if r.outcome is Outcome.not_permitted:
        return "not permitted as installed (CSA O86-19 slenderness limit)"
    if r.mr_knm is None:
        bound = "" if r.mr_if_restrained_knm is None else f"; at most {r.mr_if_restrained_knm:.1f} kN·m if restrained"
        return "not established (a bearing restraint missing or not seen)" + bound
    return f"Mr {r.mr_knm:.1f} kN·m"


def _kl_words(r: BendingRegion) -> str:
    """KL of a region, or its restrained upper bound's KL where the capacity is not established."""
    if r.kl is None and r.kl_if_restrained is not None:
        return f"KL n/a (KL {r.kl_if_restrained:.3f} if restrained)"
    return f"KL {_opt(r.kl, '.3f')}"


def _bending_line(i: int, r: BendingRegion) -> CheckLine:
    lu = "Lu held continuously" if r.lu_mm is None else f"Lu {r.lu_mm:.0f} mm"
    size = f"KZbg {_opt(r.kzbg, '.3f')}" if r.kzbg is not None else f"KZb {_opt(r.kzb, '.2f')}"
    return CheckLine(
        kind=CheckKind.bending,
        key=f"bending{i}",
        name=f"bending, {r.region} ({r.sign} moment)",
        demand=f"Mf {r.mf_knm:.1f} kN·m",
        capacity=_bending_capacity(r),
        utilisation=r.utilisation,
        clause=r.clause,
        factors=f"{lu}, CB {_opt(r.cb, '.2f')}, {_kl_words(r)}, {size}",
        combination=r.combination,
    )


def _bearing_line(j: int, b: BearingCheck) -> CheckLine:
    uplift = "" if b.uplift_kn is None else f", factored uplift {b.uplift_kn:.1f} kN ({b.uplift_combination})"
    return CheckLine(
        kind=CheckKind.bearing,
        key=f"bearing{j}",
        name=f"bearing, support {b.support}",
        demand=f"Qf {b.qf_kn:.1f} kN",
        capacity=f"Qr {b.qr_kn:.1f} kN",
        utilisation=b.utilisation,
        clause=b.clause,
        factors=f"bearing length {b.length_mm:g} mm{uplift}",
        combination=b.combination,
    )


def check_trace(result: Recheck, key: str) -> list[FactorTrace]:
    """The trace of the check a ``CheckLine.key`` names ("bending0", "shear", "bearing1", "deflection")."""
    if key.startswith("bending") and key[len("bending") :].isdigit():
        return list(result.bending[int(key[len("bending") :])].trace)
    if key.startswith("bearing") and key[len("bearing") :].isdigit():
        return list(result.bearing[int(key[len("bearing") :])].trace)
    if key == "shear":
        return list(result.shear.trace)
    if key == "deflection":
        return list(result.deflection.trace)
    msg = f"check key {key!r}; allowed: bending<n>, shear, bearing<n>, deflection"
    raise ValueError(msg)


def check_lines(result: Recheck) -> list[CheckLine]:
    """Every check of a recheck, in order: bending per region, shear, bearing per support, deflection."""
    s, d = result.shear, result.deflection
    return [
        *(_bending_line(i, r) for i, r in enumerate(result.bending)),
        CheckLine(
            kind=CheckKind.shear,
            key="shear",
            name="shear",
            # the volume method (CSA O86-19 7.5.7.3(a)) sets the total factored load W against Wr, not Vf vs Vr
            demand=f"Wf {s.vf_kn:.1f} kN (total factored load)" if s.volume_method else f"Vf {s.vf_kn:.1f} kN",
            capacity=f"Wr {s.vr_kn:.1f} kN" if s.volume_method else f"Vr {s.vr_kn:.1f} kN",
            utilisation=s.utilisation,
            clause=s.clause,
            factors=s.method,
            combination=s.combination,
        ),
        *(_bearing_line(j, b) for j, b in enumerate(result.bearing)),
        CheckLine(
            kind=CheckKind.deflection,
            key="deflection",
            name=f"deflection, {d.element}",
            demand=f"{d.delta_mm:.1f} mm",
            capacity=f"limit {d.limit_mm:.1f} mm (L/{d.limit_ratio:g})",
            utilisation=d.utilisation,
            clause=d.clause,
            combination="no specified load" if d.case == "no load" else f"specified {d.case}",
        ),
    ]
