"""Shear (CSA O86-19 7.5.7 glulam, 6.5.4 sawn lumber): the governing case over every load case."""

from __future__ import annotations

from core.analysis import BeamModel
from core.assembled import assembled
from core.clauses.factors import factored_strength
from core.clauses.shear import (
    GLULAM_SIMPLE_SHEAR_MAX_VOLUME_M3,
    PHI_SHEAR,
    glulam_volume_m3,
    glulam_vr,
    glulam_wr,
    sawn_vr,
)
from core.kinds import TraceStatus
from core.member import Member
from core.models import Beam, Material
from core.recheck.cases import LoadCase, carries_snow
from core.recheck.trace import KN_PER_N, Lines, add_kd, case_label, dead_load_line, lines_for, strength_line
from core.results import VOLUME_METHOD, RowUsed, ShearCheck

CV_SIMPLE_UDL = 3.69  # CSA O86-19 Table 7.5: simple span, uniform load


def _resistance_and_demand(
    beam: Beam, member: Member, model: BeamModel, case: LoadCase, volume: float, volume_method: bool
) -> tuple[float, float]:
    """(Vr or Wr, Vf or the total factored load W) of one case, N."""
    fv = factored_strength(member.fv_mpa, case.kd, member.kh, member.ksv, member.kt)
    if volume_method:
        return glulam_wr(fv, member.area_mm2, CV_SIMPLE_UDL, volume), case.total_factored_n
    if beam.material is Material.glulam:
        return glulam_vr(fv, member.area_mm2), case.result.max_abs_shear_n(model.lengths)
    return sawn_vr(fv, member.area_mm2, member.kzb or 1.0), case.result.max_abs_shear_n(model.lengths)


def _method(beam: Beam, volume_method: bool) -> tuple[str, str]:
    """(method, clause) of the shear check."""
    if volume_method:
        return VOLUME_METHOD, "CSA O86-19 7.5.7.3(a)"
    if beam.material is Material.glulam:
        return "2A/3", "CSA O86-19 7.5.7.2"
    return "2An/3 KZv", "CSA O86-19 6.5.4.1 (memory)"


def _method_line(trace: Lines, beam: Beam, model: BeamModel, volume: float, volume_method: bool) -> None:
    """The CV (volume method) or Z trace line of the shear check."""
    if volume_method:
        cv_status = TraceStatus.confirmed if len(model.elements) == 1 else TraceStatus.memory
        source = "simple span, uniform load" + (
            "" if cv_status is TraceStatus.confirmed else "; applied to a continuous or overhanging beam: verify"
        )
        trace.add("CV", CV_SIMPLE_UDL, "CSA O86-19 Table 7.5", source, cv_status)
        return
    if beam.material is not Material.glulam:
        return  # sawn lumber: Vr does not depend on the volume, so no Z line
    simple = "volume below 2.0 m3: simple method permitted"
    trace.add("Z", volume, "CSA O86-19 7.5.7", simple, TraceStatus.formula, "m3")


def _strength_trace(
    trace: Lines, beam: Beam, member: Member, case: LoadCase, resist: float, volume: float, volume_method: bool
) -> None:
    """fv, Fv and the Vr (or Wr) formula lines of the shear check's governing case (formulas: only when kept)."""
    strength_line(trace, member, "fv", member.fv_mpa)
    if not trace.kept:
        return
    fv = factored_strength(member.fv_mpa, case.kd, member.kh, member.ksv, member.kt)
    _, clause = _method(beam, volume_method)
    trace.add(
        "Fv",
        fv,
        clause,
        f"Fv = fv (KD KH KSv KT) = {member.fv_mpa:g} x {case.kd:g} x {member.kh:g} x {member.ksv:g} x {member.kt:g}",
        TraceStatus.formula,
        "MPa",
    )
    area = f"A = b x d = {member.area_mm2:.0f} mm2"
    if volume_method:
        how = f"Wr = phi Fv 0.48 A CV Z^-0.18, phi = {PHI_SHEAR:g}, {area}, Z = {volume:.3f} m3"
    elif beam.material is Material.glulam:
        how = f"Vr = phi Fv 2A/3, phi = {PHI_SHEAR:g}, {area}"
    else:
        how = (
            f"Vr = phi Fv (2An/3) KZv, phi = {PHI_SHEAR:g}, An = b x d = {member.area_mm2:.0f} mm2 (no notch "
            f"recorded), KZv = {member.kzb or 1.0:g}"
        )
    trace.add("Wr" if volume_method else "Vr", resist * KN_PER_N, clause, how, TraceStatus.formula, "kN")


def shear_check(
    beam: Beam,
    member: Member,
    model: BeamModel,
    cases: list[LoadCase],
    *,
    traces: bool = True,
    rows: set[RowUsed] | None = None,
) -> ShearCheck:
    """Governing shear check (O86-19 7.5.7 glulam, 6.5.4 lumber); traces: False builds no trace.

    rows: when given, the table rows of the governing case's trace are added to it, and no trace is kept.
    """
    volume = glulam_volume_m3(beam.b_mm, beam.d_mm, model.total_length_mm)
    volume_method = beam.material is Material.glulam and volume >= GLULAM_SIMPLE_SHEAR_MAX_VOLUME_M3
    best: tuple[float, float, float, LoadCase] | None = None
    dead: tuple[float, float, float, LoadCase] | None = None  # under 1.4D alone, governing or not
    for case in cases:
        resist, demand = _resistance_and_demand(beam, member, model, case, volume, volume_method)
        util = demand / resist
        if best is None or util > best[0]:
            best = (util, resist, demand, case)
        if case.combo.dead_load_only and (dead is None or util > dead[0]):
            dead = (util, resist, demand, case)
    assert best is not None
    util, resist, demand, case = best
    method, clause = _method(beam, volume_method)
    trace = lines_for(traces, rows)
    if trace is not None:
        add_kd(trace, case)
        _method_line(trace, beam, model, volume, volume_method)
        _strength_trace(trace, beam, member, case, resist, volume, volume_method)
        if dead is not None:
            du, dr, dd, dc = dead
            f, r = ("Wf", "Wr") if volume_method else ("Vf", "Vr")
            how = lambda: f"{f} {dd * KN_PER_N:.4g} kN vs {r} {dr * KN_PER_N:.4g} kN with KD {dc.kd:g}"  # noqa: E731
            dead_load_line(trace, case, du, clause, how)
    return assembled(
        ShearCheck,
        {
            "vr_kn": resist * KN_PER_N,
            "vf_kn": demand * KN_PER_N,
            "utilisation": util,
            "method": method,
            "combination": case_label(case),
            "kd": case.kd,
            "clause": clause,
            "trace": [] if trace is None else trace.lines,
            "dead_load_only": case.combo.dead_load_only,
            "snow_in_combination": carries_snow(case, beam),
            "dead_load_utilisation": None if dead is None else dead[0],
        },
    )
