"""Member recheck: picks the clauses for a logged beam and records every factor it used.

This layer takes the pydantic ``Beam``, runs the analysis for every NBC combination and live/snow
pattern, finds each region's compression edge and unsupported length, and applies the clause
functions. Besides choosing inputs and maxima it still does some arithmetic of its own, not yet
moved into cited clause functions: Le = factor x Lu (Table 7.4 row), the deflection span 2L of a
cantilever (common practice), the KL regime named in the trace, utilisations (demand / resistance)
and the conversions to kN and kN*m.
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import product
from typing import Any

from core import tables
from core.analysis import BeamModel, CaseResult, Region
from core.clauses.bearing import bearing_qr, sawn_bearing_kzcp
from core.clauses.bending import glulam_bending_strength_for_face, glulam_mr, sawn_mr, size_factor_kzbg
from core.clauses.factors import factored_bending_strength_fb, factored_strength
from core.clauses.outcomes import NotPermitted
from core.clauses.serviceability import (
    EDITION,
    deflection_limit_mm,
    long_term_deformation_rule,
    modulus_for_deflection_es,
)
from core.clauses.shear import (
    GLULAM_SIMPLE_SHEAR_MAX_VOLUME_M3,
    glulam_volume_m3,
    glulam_vr,
    glulam_wr,
    sawn_vr,
)
from core.clauses.stability import (
    critical_slenderness_ck,
    glulam_db_waives_stability,
    lateral_stability_kl,
    lumber_db_limit,
    slenderness_cb,
)
from core.edges import EdgeSupport, compression_edge, unrestrained_elements
from core.effective_length import chosen_row
from core.findings import build_findings, overall_status
from core.kinds import ElementKind, MomentSign, Outcome, TraceStatus
from core.loads import Combination, applicable, combination_kd, gravity_combinations
from core.member import Member, member_properties
from core.models import Beam, DeadLoadPattern, Material, NegativeLu, Use
from core.results import (
    BearingCheck,
    BendingRegion,
    DeflectionCheck,
    FactorTrace,
    Recheck,
    ShearCheck,
)

CV_SIMPLE_UDL = 3.69
SPLIT_HIGH_D = 1.25  # NBC Table 4.1.3.2.-A: dead-load factor where it adds to the effect
SPLIT_LOW_D = 0.9  # and where it counteracts
KN_PER_N = 1e-3  # unit conversion: multiply a force in N by this to get kN
KNM_PER_NMM = 1e-6  # unit conversion: a moment in N*mm to kN*m


@dataclass(frozen=True, kw_only=True)
class LoadCase:
    """One combination with one live/snow pattern, solved."""

    combo: Combination
    kd: float
    kd_note: str
    pattern: str
    result: CaseResult
    total_factored_n: float


def _patterns(n_el: int) -> list[tuple[bool, ...]]:
    """Live and snow patterns: every non-empty subset of elements (all elements for one element)."""
    if n_el == 1:
        return [(True,)]
    return [p for p in product((True, False), repeat=n_el) if any(p)]


def _pattern_name(model: BeamModel, pattern: tuple[bool, ...]) -> str:
    if all(pattern):
        return "all spans"
    return ", ".join(el.name for el, on in zip(model.elements, pattern, strict=True) if on)


def load_cases(beam: Beam, member: Member, model: BeamModel) -> list[LoadCase]:
    """Every applicable NBC gravity combination with every live/snow pattern, solved.

    Where dead load counteracts (more than one element), the envelope also holds the split patterns of
    reference o86.md section 13 (NBC 4.1.3.2, 0.9D where dead load counteracts): for each live/snow
    pattern, 1.25D on the loaded parts and 0.9D on the rest. With uniform loads per element these give
    the exact extreme of every reaction and moment. ``dead_load_pattern = "uniform"`` (a flagged option)
    keeps one dead-load factor on the whole beam.
    """
    dead = beam.loads.dead_kn_m + member.self_weight_n_mm
    live, snow = beam.loads.live_kn_m, beam.loads.snow_kn_m
    n_el = len(model.elements)
    split = n_el > 1 and beam.dead_load_pattern is DeadLoadPattern.per_part
    cases = []
    for combo in gravity_combinations(counteracting_dead=n_el > 1):
        if not applicable(combo, live, snow):
            continue
        kd, note = combination_kd(combo, dead, live, snow)
        variable = combo.alpha_l * live + combo.alpha_s * snow
        patterns = [(True,) * n_el] if combo.permanent or variable == 0 else _patterns(n_el)
        for pattern in patterns:
            w = tuple(combo.alpha_d * dead + (variable if on else 0.0) for on in pattern)
            name = "" if combo.permanent else _pattern_name(model, pattern)
            cases.append(
                LoadCase(
                    combo=combo,
                    kd=kd,
                    kd_note=note,
                    pattern=name,
                    result=model.case(w),
                    total_factored_n=_total(w, model),
                )
            )
            if split and combo.alpha_d == SPLIT_HIGH_D and not all(pattern):
                w = tuple((SPLIT_HIGH_D * dead + variable) if on else SPLIT_LOW_D * dead for on in pattern)
                relieving = ", ".join(el.name for el, on in zip(model.elements, pattern, strict=True) if not on)
                label = f"{name}; 0.9D on {relieving}"
                cases.append(
                    LoadCase(
                        combo=combo,
                        kd=kd,
                        kd_note=note,
                        pattern=label,
                        result=model.case(w),
                        total_factored_n=_total(w, model),
                    )
                )
    return cases


def _total(w: tuple[float, ...], model: BeamModel) -> float:
    return sum(wi * li for wi, li in zip(w, model.lengths, strict=True))


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


def bending_check(
    beam: Beam,
    member: Member,
    model: BeamModel,
    region: Region,
    case: LoadCase,
    edge: EdgeSupport,
    not_established: bool,
    trace: list[FactorTrace] | None,
) -> dict[str, Any]:
    """Mr and utilisation of one region under one load case (numbers; trace appended if given)."""
    sawn = beam.material is Material.sawn
    if sawn:
        fb_spec, face = member.fb_pos_mpa, "fb"
    else:
        fb_spec, face = glulam_bending_strength_for_face(
            member.fb_pos_mpa, member.fb_neg_mpa, region.sign, beam.top_stamp.value
        )
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
        "dead_load_only": case.combo.permanent,
    }
    if trace is not None:
        trace.append(
            FactorTrace(
                symbol="KD", value=case.kd, clause="CSA O86-19 5.3.2", source=case.kd_note, status=TraceStatus.memory
            )
        )
        trace.append(
            FactorTrace(
                symbol=f"{face} ({region.sign} moment)",
                value=fb_spec,
                unit="MPa",
                clause="CSA O86-19 Table 7.3 note" if not sawn else "CSA O86-19 Table 6.4",
                source=f"top stamp {beam.top_stamp.value}" if not sawn else f"{beam.species} {beam.grade}",
                status=member.grade_status,
            )
        )
        trace.append(
            FactorTrace(
                symbol="Fb",
                value=round(fb, 3),
                unit="MPa",
                clause="CSA O86-19 6.5.3.1 (memory)" if sawn else "CSA O86-19 7.5.6.5.1",
                source="Fb = fb (KD KH KSb KT)",
            )
        )
        if edge.continuous:
            trace.append(
                FactorTrace(symbol="Lu", value="held continuously", source=edge.description, status=edge.status)
            )
        else:
            trace.append(
                FactorTrace(
                    symbol="Lu", value=round(edge.lu_mm), unit="mm", source=edge.description, status=edge.status
                )
            )
        if edge.option:
            trace.append(
                FactorTrace(
                    symbol="option", value=edge.option, source="chosen by the reviewer", status=TraceStatus.input
                )
            )
    if not sawn:
        kzbg = size_factor_kzbg(beam.b_mm, beam.d_mm, region.length_mm)
        out["kzbg"] = kzbg
        if trace is not None:
            trace.append(
                FactorTrace(
                    symbol="KZbg",
                    value=round(kzbg, 4),
                    clause="CSA O86-19 7.5.6.5.1",
                    source=f"L = {region.length_mm:.0f} mm between points of zero moment; cap 1.3",
                    status=TraceStatus.confirmed,
                )
            )
    if not_established:
        out["outcome"] = Outcome.not_established
        _upper_bound(beam, member, model, region, fb, out, trace)
        return out
    kl = _stability_kl(beam, member, edge, fb, out, trace)
    if isinstance(kl, NotPermitted):
        out["outcome"] = Outcome.not_permitted
        return out
    out["kl"] = kl
    if sawn:
        mr = sawn_mr(fb, member.s_mm3, member.kzb or 1.0, kl)
        clause = "CSA O86-19 6.5.3.1 (memory)"
    else:
        mr = glulam_mr(fb, member.s_mm3, 1.0, out["kzbg"], kl)
        clause = "CSA O86-19 7.5.6.5.1"
    out["mr_knm"] = mr * KNM_PER_NMM
    out["utilisation"] = region.m_max_nmm / mr if mr > 0 else float("inf")
    out["outcome"] = Outcome.overstress if out["utilisation"] > 1.0 else Outcome.ok
    if trace is not None:
        trace.append(
            FactorTrace(
                symbol="Mr",
                value=round(mr * KNM_PER_NMM, 2),
                unit="kN·m",
                clause=clause,
                source="lesser of phi Fb S KX KZbg and phi Fb S KX KL, phi = 0.9, KX = 1"
                if not sawn
                else "phi Fb S KZb KL, phi = 0.9",
            )
        )
    return out


def _upper_bound(
    beam: Beam,
    member: Member,
    model: BeamModel,
    region: Region,
    fb: float,
    out: dict[str, Any],
    trace: list[FactorTrace] | None,
) -> None:
    """What a not-established region would give if its bearings were restrained (an upper bound).

    KL from the recorded bracing of the compression edge, with the unrestrained bearings counted as
    restraints (CSA O86-19 7.5.6.3.1 is not met, so the real capacity is lower than this).
    """
    restrained_edge = compression_edge(beam, model, region, assume_restrained=True)
    scratch: dict[str, Any] = dict(out)
    kl = _stability_kl(beam, member, restrained_edge, fb, scratch, None)
    if isinstance(kl, NotPermitted):
        _note(trace, "Mr (if restrained)", None, kl.clause, f"not permitted even if restrained: {kl}", "formula")
        return
    if beam.material is Material.sawn:
        mr = sawn_mr(fb, member.s_mm3, member.kzb or 1.0, kl)
    else:
        mr = glulam_mr(fb, member.s_mm3, 1.0, out["kzbg"], kl)
    out["kl_if_restrained"] = kl
    out["mr_if_restrained_knm"] = mr * KNM_PER_NMM
    out["utilisation_if_restrained"] = region.m_max_nmm / mr
    _note(
        trace,
        "Mr (if restrained)",
        round(mr * KNM_PER_NMM, 2),
        "CSA O86-19 7.5.6.3.1, 7.5.6.4",
        f"upper bound: KL = {kl:.4f} with Lu = {scratch['lu_mm'] or 0:.0f} mm as if every bearing were restrained; "
        "the real capacity is lower",
        "formula",
        "kN·m",
    )


def _stability_kl(
    beam: Beam,
    member: Member,
    edge: EdgeSupport,
    fb: float,
    out: dict[str, Any],
    trace: list[FactorTrace] | None,
) -> float | NotPermitted:
    db = beam.d_mm / beam.b_mm
    if beam.material is Material.glulam:
        if glulam_db_waives_stability(beam.d_mm, beam.b_mm):
            _note(trace, "KL", 1.0, "CSA O86-19 7.5.6.3.2", f"d/b = {db:.2f} <= 2.5", "memory")
            return 1.0
        e = member.e_mpa
    else:
        limit, need = lumber_db_limit(edge.purlins_in_line, edge.held_directly, edge.bridging, edge.both_edges)
        if db <= limit:
            _note(trace, "KL", 1.0, "CSA O86-19 6.5.3.2.1", f"d/b = {db:.2f} <= {limit:g} ({need})", "memory")
            return 1.0
        e = member.e05_mpa
        _note(
            trace,
            "E05",
            e,
            "CSA O86-19 6.5.3.2 (reference Q2)",
            f"d/b = {db:.2f} > {limit:g}: glulam KL method with E05 (conservative choice)",
            "memory",
        )
        # reference o86.md section 13: past its tier, Lu is the spacing of the points that restrain
        # rotation as well as displacement (bridging, blocking, bearings), never zero for a held edge.
        lu = edge.lu_rotation_mm
        out["lu_mm"] = lu
        _note(trace, "Lu", round(lu), "CSA O86-19 6.5.3.2; reference o86.md 13", edge.rotation_how, "memory", "mm")
        return _kl_from_lu(beam, member, edge, fb, e, lu, out, trace)
    if edge.continuous:
        _note(trace, "KL", 1.0, "CSA O86-19 7.5.6.3", edge.description, "memory")
        return 1.0
    return _kl_from_lu(beam, member, edge, fb, e, edge.lu_mm, out, trace)


def _kl_from_lu(
    beam: Beam,
    member: Member,
    edge: EdgeSupport,
    fb: float,
    e: float,
    lu_mm: float,
    out: dict[str, Any],
    trace: list[FactorTrace] | None,
) -> float | NotPermitted:
    """KL by CSA O86-19 7.5.6.4 from an unsupported length (mm) and the modulus used (MPa)."""
    row, why = chosen_row(beam.le_case, edge.kind)
    factor = float(row["factor"])
    le = factor * lu_mm
    cb = slenderness_cb(le, beam.d_mm, beam.b_mm)
    ck = critical_slenderness_ck(e, member.kse, member.kt, fb)
    out.update(le_mm=le, le_factor=factor, cb=cb, ck=ck)
    _note(
        trace,
        "Le",
        round(le, 1),
        "CSA O86-19 7.5.6.4.2 / Table 7.4",
        f"effective_length row {row['le_case']} ({row['description']}): {factor:g} x Lu; {why}",
        row["status"],
        "mm",
    )
    _note(trace, "CB", round(cb, 3), "CSA O86-19 7.5.6.4.3", "CB = sqrt(Le d / b^2)", "confirmed")
    _note(trace, "CK", round(ck, 3), "CSA O86-19 7.5.6.4.4", "CK = sqrt(0.97 E KSE KT / (Fb KX))", "confirmed")
    kl = lateral_stability_kl(cb, ck, e, member.kse, member.kt, fb)
    if isinstance(kl, NotPermitted):
        _note(trace, "KL", None, kl.clause, str(kl), "confirmed")
        return kl
    regime = "(a) CB <= 10" if cb <= 10 else ("(b) 10 < CB <= CK" if cb <= ck else "(c) CK < CB <= 50")
    _note(trace, "KL", round(kl, 4), "CSA O86-19 7.5.6.4.4", f"regime {regime}", "confirmed")
    return kl


def _note(
    trace: list[FactorTrace] | None,
    symbol: str,
    value: float | None,
    clause: str,
    source: str,
    status: str,
    unit: str = "",
) -> None:
    """Append one FactorTrace when a trace is being kept (status: a TraceStatus value)."""
    if trace is not None:
        trace.append(
            FactorTrace(symbol=symbol, value=value, unit=unit, clause=clause, source=source, status=TraceStatus(status))
        )


_OUTCOME_RANK = {Outcome.not_established: 3, Outcome.not_permitted: 2, Outcome.overstress: 1, Outcome.ok: 0}


def _rank(numbers: dict[str, Any]) -> tuple[int, float]:
    util = numbers["utilisation"]
    if util is None:
        upper = numbers.get("utilisation_if_restrained")
        util = numbers["mf_knm"] if upper is None else upper
    return (_OUTCOME_RANK[numbers["outcome"]], util)


def bending_regions(beam: Beam, member: Member, model: BeamModel, cases: list[LoadCase]) -> list[BendingRegion]:
    """Governing bending check for every named region over all cases."""
    blocked = unrestrained_elements(beam, model)
    best: dict[str, tuple[tuple[int, float], Region, LoadCase, EdgeSupport, bool]] = {}
    edges: dict[tuple[Any, ...], EdgeSupport] = {}
    exact = beam.negative_lu is NegativeLu.zero_moment_point
    for case in cases:
        for region in model.regions(case.result):
            name = f"{region_name(model, region)}|{region.sign}"
            # the edge depends on the elements a region spans (and, for the zero-moment option, on its ends)
            key = (region.sign, region.elements, *((region.x0_mm, region.x1_mm) if exact else ()))
            edge = edges.get(key)
            if edge is None:
                edge = edges[key] = compression_edge(beam, model, region)
            ne = bool(blocked.intersection(region.elements))
            rank = _rank(bending_check(beam, member, model, region, case, edge, ne, None))
            if name not in best or rank > best[name][0]:
                best[name] = (rank, region, case, edge, ne)
    out = []
    for name, (_, region, case, edge, ne) in sorted(best.items(), key=lambda kv: kv[1][1].x0_mm):
        trace: list[FactorTrace] = []
        numbers = bending_check(beam, member, model, region, case, edge, ne, trace)
        clause = "CSA O86-19 7.5.6.5.1, 7.5.6.4" if beam.material is Material.glulam else "CSA O86-19 6.5.3"
        out.append(
            BendingRegion(
                region=name.split("|")[0],
                sign=region.sign,
                x_start_mm=region.x0_mm,
                x_end_mm=region.x1_mm,
                combination=_case_label(case),
                clause=clause,
                compression_edge=edge.description,
                trace=list(member.trace) + trace,
                **numbers,
            )
        )
    return out


def _case_label(case: LoadCase) -> str:
    if not case.pattern or case.pattern == "all spans":
        return case.combo.name
    if "; 0.9D on " in case.pattern:
        loaded, relieving = case.pattern.split("; 0.9D on ")
        return f"{case.combo.name} (1.25D and L/S on {loaded}; 0.9D on {relieving})"
    return f"{case.combo.name} (L/S on {case.pattern})"


def shear_check(beam: Beam, member: Member, model: BeamModel, cases: list[LoadCase]) -> ShearCheck:
    """Governing shear check (O86-19 7.5.7 glulam, 6.5.4 lumber)."""
    volume = glulam_volume_m3(beam.b_mm, beam.d_mm, model.total_length_mm)
    volume_method = beam.material is Material.glulam and volume >= GLULAM_SIMPLE_SHEAR_MAX_VOLUME_M3
    best: tuple[float, float, float, LoadCase] | None = None
    for case in cases:
        fv = factored_strength(member.fv_mpa, case.kd, member.kh, member.ksv, member.kt)
        if volume_method:
            resist, demand = glulam_wr(fv, member.area_mm2, CV_SIMPLE_UDL, volume), case.total_factored_n
        elif beam.material is Material.glulam:
            resist, demand = glulam_vr(fv, member.area_mm2), case.result.max_abs_shear_n(model.lengths)
        else:
            resist = sawn_vr(fv, member.area_mm2, member.kzb or 1.0)
            demand = case.result.max_abs_shear_n(model.lengths)
        util = demand / resist
        if best is None or util > best[0]:
            best = (util, resist, demand, case)
    assert best is not None
    util, resist, demand, case = best
    if volume_method:
        cv_status = TraceStatus.confirmed if len(model.elements) == 1 else TraceStatus.memory
        method = "volume: Wr vs total factored load W (Z >= 2.0 m3)"
        clause = "CSA O86-19 7.5.7.3(a)"
        extra = FactorTrace(
            symbol="CV",
            value=CV_SIMPLE_UDL,
            clause="CSA O86-19 Table 7.5",
            source="simple span, uniform load"
            + ("" if cv_status is TraceStatus.confirmed else "; applied to a continuous or overhanging beam: verify"),
            status=cv_status,
        )
    else:
        method = "2A/3" if beam.material is Material.glulam else "2An/3 KZv"
        clause = "CSA O86-19 7.5.7.2" if beam.material is Material.glulam else "CSA O86-19 6.5.4.1 (memory)"
        extra = FactorTrace(
            symbol="Z",
            value=round(volume, 3),
            unit="m3",
            clause="CSA O86-19 7.5.7",
            source="volume below 2.0 m3: simple method permitted"
            if beam.material is Material.glulam
            else "sawn lumber",
        )
    trace = [
        FactorTrace(
            symbol="KD", value=case.kd, clause="CSA O86-19 5.3.2", source=case.kd_note, status=TraceStatus.memory
        ),
        extra,
    ]
    return ShearCheck(
        vr_kn=resist * KN_PER_N,
        vf_kn=demand * KN_PER_N,
        utilisation=util,
        method=method,
        combination=_case_label(case),
        kd=case.kd,
        clause=clause,
        trace=trace,
    )


def bearing_checks(beam: Beam, member: Member, model: BeamModel, cases: list[LoadCase]) -> list[BearingCheck]:
    """Bearing at each support (O86-19 6.5.6 lumber, 7.5.9 glulam; KB = 1.0)."""
    kzcp = sawn_bearing_kzcp(beam.b_mm, beam.d_mm) if beam.material is Material.sawn else 1.0
    dead = beam.loads.dead_kn_m + member.self_weight_n_mm
    now = model.case((dead,) * len(model.elements)).reactions_n  # specified dead load as it stands
    out = []
    for j, bearing in enumerate(beam.bearings):
        area = beam.b_mm * bearing.length_mm
        best: tuple[float, float, float, LoadCase] | None = None
        lowest: tuple[float, LoadCase] | None = None
        for case in cases:
            fcp = factored_strength(member.fcp_mpa, case.kd, member.kscp, member.kt)
            qr = bearing_qr(fcp, area, 1.0, kzcp)
            reaction = case.result.reactions_n[j]
            qf = max(reaction, 0.0)  # a downward reaction loads the bearing; uplift is reported below
            util = qf / qr
            if best is None or util > best[0]:
                best = (util, qr, qf, case)
            if lowest is None or reaction < lowest[0]:
                lowest = (reaction, case)
        assert best is not None
        assert lowest is not None
        util, qr, qf, case = best
        uplift = -lowest[0] if lowest[0] < 0 else None
        clause = "CSA O86-19 7.5.9 (memory)" if beam.material is Material.glulam else "CSA O86-19 6.5.6 (memory)"
        trace = [
            FactorTrace(
                symbol="Ab",
                value=area,
                unit="mm2",
                source=f"b x bearing length {bearing.length_mm:g} mm",
                status=TraceStatus.input,
            ),
            FactorTrace(
                symbol="KB", value=1.0, clause=clause, source="end bearing / conservative", status=TraceStatus.memory
            ),
            FactorTrace(symbol="KZcp", value=kzcp, clause=clause, status=TraceStatus.memory),
            FactorTrace(
                symbol="KD", value=case.kd, clause="CSA O86-19 5.3.2", source=case.kd_note, status=TraceStatus.memory
            ),
        ]
        out.append(
            BearingCheck(
                support=j + 1,
                qr_kn=qr * KN_PER_N,
                qf_kn=qf * KN_PER_N,
                utilisation=util,
                length_mm=bearing.length_mm,
                combination=_case_label(case),
                clause=clause,
                trace=trace,
                uplift_kn=None if uplift is None else uplift * KN_PER_N,
                uplift_combination=None if uplift is None else _case_label(lowest[1]),
                lifts_now=now[j] < 0,
            )
        )
    return out


def _deflection_patterns(n_el: int) -> list[tuple[bool, ...]]:
    """All loaded, each checkerboard, each element alone (common practice for maximum deflection)."""
    pats = {(True,) * n_el}
    if n_el > 1:
        pats.add(tuple(i % 2 == 0 for i in range(n_el)))
        pats.add(tuple(i % 2 == 1 for i in range(n_el)))
        pats.update(tuple(i == k for i in range(n_el)) for k in range(n_el))
    return sorted(pats, reverse=True)


_LIMIT_CLAUSE = {"total_specified": "CSA O86-19 5.4.2", "long_term": "CSA O86-19 5.4.3"}


def _use_row(beam: Beam) -> dict[str, str]:
    """The deflection-limit row for the recorded use; when not recorded, the strictest (largest ratio)."""
    if beam.use is not None:
        return tables.find("deflection_limits", use=beam.use.value)
    rows = [r for r in tables.load("deflection_limits").rows if r["use"] in {u.value for u in Use}]
    return max(rows, key=lambda r: float(r["ratio"]))


def deflection_check(beam: Beam, member: Member, model: BeamModel) -> DeflectionCheck:
    """Specified-load deflection (CSA O86-19 5.4.2, 5.4.3; NBC Table 9.4.3.1), mm.

    L + S against the use limit, D + L + S against L/180, and for O86-19 the long-term (dead) load
    against L/360 (reference o86.md sections 12 and 13).
    """
    es = modulus_for_deflection_es(member.e_mpa, member.kse, member.kt_e)
    ei = es * member.inertia_mm4
    dead = beam.loads.dead_kn_m + member.self_weight_n_mm
    variable = beam.loads.live_kn_m + beam.loads.snow_kn_m
    use_row = _use_row(beam)
    total_row = tables.find("deflection_limits", use="total_specified")
    checks: list[tuple[str, dict[str, str], float, float]] = [
        ("L + S", use_row, 0.0, 1.0),
        ("D + L + S", total_row, dead, 1.0),
    ]
    long_term = long_term_deformation_rule(EDITION)
    if long_term is not None:
        checks.append(("D (long-term, O86-19 5.4.3)", tables.find("deflection_limits", use=long_term), dead, 0.0))
    best: tuple[float, float, float, str, str, dict[str, str]] | None = None
    n_el = len(model.elements)
    for pattern in _deflection_patterns(n_el):
        for label, row, base, share in checks:
            w = tuple(base + (share * variable if on else 0.0) for on in pattern)
            if not any(w):
                continue
            for e, (delta, _) in enumerate(model.deflections_mm(w, ei)):
                el = model.elements[e]
                span = 2 * el.length_mm if el.kind is ElementKind.overhang else el.length_mm
                limit = deflection_limit_mm(span, float(row["ratio"]))
                util = abs(delta) / limit
                if best is None or util > best[0]:
                    best = (util, abs(delta), limit, label, el.name, row)
    if best is None:
        return DeflectionCheck(
            delta_mm=0.0,
            limit_mm=0.0,
            utilisation=0.0,
            case="no load",
            element="-",
            clause="CSA O86-19 5.4.2",
            trace=[],
        )
    util, delta, limit, label, element, row = best
    trace = [
        FactorTrace(
            symbol="ES",
            value=es,
            unit="MPa",
            clause="CSA O86-19 5.4.1",
            source="E KSE KT (mean E)",
            status=TraceStatus.memory,
        ),
        FactorTrace(
            symbol="limit",
            value=f"L/{row['ratio']}",
            clause=_LIMIT_CLAUSE.get(row["use"], "NBC Table 9.4.3.1"),
            source=row["description"],
            status=TraceStatus(row["status"]),
        ),
    ]
    if beam.use is None:
        trace.append(
            FactorTrace(
                symbol="use",
                value=use_row["use"],
                source="not recorded: the strictest deflection limit of the table is taken",
                status=TraceStatus.input,
            )
        )
    trace.append(
        FactorTrace(
            symbol="edition",
            value=EDITION,
            clause="CSA O86-19 5.4.3",
            source="long-term deformation checked (O86-24 deletes 5.4.3 and folds creep into 5.4.2)"
            if long_term
            else "no separate long-term check in this edition",
            status=TraceStatus.confirmed,
        )
    )
    return DeflectionCheck(
        delta_mm=delta,
        limit_mm=limit,
        utilisation=util,
        case=label,
        element=element,
        clause="CSA O86-19 5.4.2; NBC 9.4.3.1",
        trace=trace,
    )


def recheck(beam: Beam) -> Recheck:
    """Recheck one logged beam: bending per region, shear, bearing, deflection and findings."""
    member = member_properties(beam)
    model = BeamModel(list(beam.spans_mm), beam.overhang_left_mm, beam.overhang_right_mm)
    cases = load_cases(beam, member, model)  # 1.4D always applies, so never empty
    bending = bending_regions(beam, member, model, cases)
    shear = shear_check(beam, member, model, cases)
    bearing = bearing_checks(beam, member, model, cases)
    deflection = deflection_check(beam, member, model)
    findings = build_findings(beam, member, bending, shear, bearing, deflection)
    utils = [r.utilisation for r in bending if r.utilisation is not None]
    utils += [shear.utilisation, deflection.utilisation] + [b.utilisation for b in bearing]
    return Recheck(
        mark=beam.mark,
        status=overall_status(bending, findings),
        bending=bending,
        shear=shear,
        bearing=bearing,
        deflection=deflection,
        findings=findings,
        governing_utilisation=max(utils) if utils else None,
        material=beam.material.value,
    )
