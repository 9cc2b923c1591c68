"""Every load case a recheck tries, with its moments, shear and support reactions, for a calculation sheet.

The recheck keeps only each check's governing case. A reviewer checking the sheet by hand also wants
the cases it chose among (NBC 2020 Table 4.1.3.2.-A with every live/snow pattern, as
``core.recheck.cases`` builds them) and the support reactions, specified by load type and factored,
which the connections and bearings below are designed for. Nothing here changes a recheck's result:
the cases are the same objects the checks read (``load_cases``), reduced to numbers.
"""

from __future__ import annotations

from pydantic import Field

from core.analysis import BeamModel, CaseResult
from core.member import member_properties
from core.models import Beam
from core.recheck import beam_model
from core.recheck.cases import live_patterns, load_cases
from core.recheck.trace import KN_PER_N, KNM_PER_NMM, case_label
from core.results import Out

KN_M_PER_N_MM = 1.0  # unit conversion: a line load in N/mm is the same number in kN/m
NONE_BELOW = 1e-6  # a moment or shear under this (kN·m, kN: 1 N·mm, 1 mN) is round-off, not an extreme to name


class CaseRow(Out):
    """One load case tried: its factored line load on each part and the extremes it produces."""

    number: int  # 1, 2, ... in the order the recheck builds the cases
    combination: str  # as the checks name their governing case (``case_label``)
    kd: float  # CSA O86-19 5.3.2 load duration factor of the case
    w_factored_kn_m: list[float]  # factored line load on each part (element), left to right, self-weight included
    m_sagging_knm: float  # largest sagging (positive) moment anywhere, kN·m; 0 when none
    m_hogging_knm: float  # largest hogging (negative) moment anywhere, as a magnitude, kN·m; 0 when none
    v_max_kn: float  # largest |V| anywhere (at a part's end), kN
    reactions_kn: list[float]  # one per support, left to right, upward positive, kN
    # the envelope maxima this case gives first ("M sag", "M hog", "V", "R1", ...) and minima ("R1", ...: uplift if < 0)
    largest: list[str] = Field(default_factory=list)
    least: list[str] = Field(default_factory=list)


class SupportReactions(Out):
    """One support's reactions: specified by load type (for connection design) and factored extremes."""

    support: int  # 1-based, left to right
    x_m: float  # position from the beam's left end, m
    dead_kn: float  # specified dead load (with self-weight) on every part
    live_kn: float  # specified live load, the pattern giving the largest reaction (0 when no live load)
    snow_kn: float  # specified snow load, the pattern giving the largest reaction (0 when no snow load)
    factored_max_kn: float  # largest factored reaction over every case tried
    factored_max_case: int  # CaseRow.number giving it
    factored_min_kn: float  # least factored reaction over every case tried (negative: uplift, held down)
    factored_min_case: int


class CaseTable(Out):
    """The cases a recheck tried and the reactions at each support."""

    parts: list[str]  # the parts (elements) named left to right: "overhang left", "span 1", ...
    cases: list[CaseRow]
    supports: list[SupportReactions]
    self_weight_kn_m: float  # the member's self-weight, included in the dead load


def extreme_moments_nmm(result: CaseResult, lengths: tuple[float, ...]) -> tuple[float, float]:
    """Largest sagging and largest hogging moment of a case (N·mm, both >= 0).

    Under a uniform load w on a part, M(x) = M0 + V0 x - w x²/2 (statics of a beam segment; any
    handbook), so the sagging peak is at V(x) = 0, x = V0 / w, when it falls inside the part, and the
    hogging peak at one of the part's ends (M is concave for w > 0).
    """
    sag, hog = 0.0, 0.0
    for e, length in enumerate(lengths):
        w = result.w_n_mm[e]
        candidates = [result.moment_nmm(e, 0.0), result.moment_nmm(e, length)]
        if w > 0.0 and 0.0 < result.v0_n[e] / w < length:
            candidates.append(result.moment_nmm(e, result.v0_n[e] / w))
        sag = max(sag, *candidates)
        hog = max(hog, *(-m for m in candidates))
    return sag, hog


def _with_extremes(rows: list[CaseRow]) -> list[CaseRow]:
    """The rows, each naming the envelope values it is the first case in order to reach (``largest``, ``least``)."""
    named: dict[tuple[int, bool], list[str]] = {}  # (row index, largest) -> symbols

    def first(symbol: str, values: list[float], largest: bool, magnitude: bool = False) -> None:
        best = max(values) if largest else min(values)
        if magnitude and best < NONE_BELOW:
            return  # no sagging (or hogging) moment at all (round-off of a solve): nothing to name
        named.setdefault((values.index(best), largest), []).append(symbol)

    first("M sag", [r.m_sagging_knm for r in rows], True, magnitude=True)
    first("M hog", [r.m_hogging_knm for r in rows], True, magnitude=True)
    first("V", [r.v_max_kn for r in rows], True, magnitude=True)
    for j in range(len(rows[0].reactions_kn)):
        first(f"R{j + 1}", [r.reactions_kn[j] for r in rows], True)
        first(f"R{j + 1}", [r.reactions_kn[j] for r in rows], False)
    return [
        r.model_copy(update={"largest": named.get((i, True), []), "least": named.get((i, False), [])})
        for i, r in enumerate(rows)
    ]


def _specified_max(model: BeamModel, w_n_mm: float, support: int) -> float:
    """The largest reaction at a support from a specified load w on any pattern of parts (N; 0 when w is 0)."""
    if w_n_mm == 0.0:
        return 0.0
    n_el = len(model.elements)
    return max(
        model.case(tuple(w_n_mm if on else 0.0 for on in pattern)).reactions_n[support]
        for pattern in live_patterns(n_el)
    )


def case_table(beam: Beam) -> CaseTable:
    """Every case the recheck of ``beam`` tries, and its support reactions (see the module docstring)."""
    member = member_properties(beam)
    model = beam_model(beam)
    cases = load_cases(beam, member, model)
    rows = []
    for n, case in enumerate(cases, start=1):
        sag, hog = extreme_moments_nmm(case.result, model.lengths)
        rows.append(
            CaseRow(
                number=n,
                combination=case_label(case),
                kd=case.kd,
                w_factored_kn_m=[w * KN_M_PER_N_MM for w in case.result.w_n_mm],
                m_sagging_knm=sag * KNM_PER_NMM,
                m_hogging_knm=hog * KNM_PER_NMM,
                v_max_kn=case.result.max_abs_shear_n(model.lengths) * KN_PER_N,
                reactions_kn=[r * KN_PER_N for r in case.result.reactions_n],
            )
        )
    rows = _with_extremes(rows)
    dead = beam.loads.dead_kn_m + member.self_weight_n_mm
    dead_reactions = model.case((dead,) * len(model.elements)).reactions_n
    supports = []
    for j, x_mm in enumerate(model.support_x_mm):
        symbol = f"R{j + 1}"  # the first case in order reaching each extreme names it (``_with_extremes``)
        high = next(row for row in rows if symbol in row.largest)
        low = next(row for row in rows if symbol in row.least)
        supports.append(
            SupportReactions(
                support=j + 1,
                x_m=x_mm / 1000.0,
                dead_kn=dead_reactions[j] * KN_PER_N,
                live_kn=_specified_max(model, beam.loads.live_kn_m, j) * KN_PER_N,
                snow_kn=_specified_max(model, beam.loads.snow_kn_m, j) * KN_PER_N,
                factored_max_kn=high.reactions_kn[j],
                factored_max_case=high.number,
                factored_min_kn=low.reactions_kn[j],
                factored_min_case=low.number,
            )
        )
    return CaseTable(
        parts=[el.name for el in model.elements],
        cases=rows,
        supports=supports,
        self_weight_kn_m=member.self_weight_n_mm,
    )


__all__ = ["CaseRow", "CaseTable", "SupportReactions", "case_table", "extreme_moments_nmm"]
