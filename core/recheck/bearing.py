"""Bearing at each support (CSA O86-19 6.5.6 sawn lumber, 7.5.9 glulam) and uplift."""

from __future__ import annotations

from collections.abc import Sequence

from core.analysis import BeamModel
from core.assembled import assembled
from core.clauses.bearing import PHI_BEARING, bearing_qr, sawn_bearing_kzcp
from core.clauses.factors import factored_strength
from core.kinds import TraceStatus
from core.member import Member
from core.models import Beam, Bearing, Material
from core.recheck.cases import LoadCase, carries_snow, live_patterns
from core.recheck.trace import KN_PER_N, Lines, add_kd, case_label, dead_load_line, lines_for, strength_line
from core.results import BearingCheck, RowUsed


def _kzcp_line(trace: Lines, beam: Beam, kzcp: float) -> None:
    """The KZcp trace line: the sawn-lumber formula of O86-19 6.5.6.2.3 with r = b/d, or 1.0 for glulam."""
    if beam.material is Material.glulam:
        trace.add("KZcp", kzcp, "CSA O86-19 7.5.9 (memory)", "glulam: no KZcp (1.0)", TraceStatus.memory)
        return
    trace.add(
        "KZcp",
        kzcp,
        "CSA O86-19 6.5.6.2.3 (memory)",
        f"r = b/d = {beam.b_mm / beam.d_mm:.3f}: 1.0 + 0.15 (r - 1), at least 1.0, at most 1.15" if trace.kept else "",
        TraceStatus.memory,
        row="KZcp = 1.0 + 0.15 (r - 1) with r = b/d, at least 1.0, at most 1.15",
    )


def _trace(
    trace: Lines,
    beam: Beam,
    member: Member,
    bearing: Bearing,
    area: float,
    kzcp: float,
    clause: str,
    case: LoadCase,
    qr: float,
) -> None:
    """The lines of a bearing check's trace: Ab, KB, KZcp, KD, fcp, Fcp and the Qr formula.

    Ab (an input), Fcp and Qr (formulas) name no table row: written only when the lines are kept.
    """
    if trace.kept:
        trace.add("Ab", area, "", f"b x bearing length {bearing.length_mm:g} mm", TraceStatus.input, "mm2")
    kb_rule = "KB = 1.0 at an end bearing: no length factor taken (conservative)"
    trace.add("KB", 1.0, clause, kb_rule, TraceStatus.memory)
    _kzcp_line(trace, beam, kzcp)
    add_kd(trace, case)
    strength_line(trace, member, "fcp", member.fcp_mpa)
    if not trace.kept:
        return
    fcp = factored_strength(member.fcp_mpa, case.kd, member.kscp, member.kt)
    trace.add(
        "Fcp",
        fcp,
        clause,
        f"Fcp = fcp (KD KScp KT) = {member.fcp_mpa:g} x {case.kd:g} x {member.kscp:g} x {member.kt:g}",
        TraceStatus.formula,
        "MPa",
    )
    trace.add(
        "Qr",
        qr * KN_PER_N,
        clause,
        f"Qr = phi Fcp Ab KB KZcp, phi = {PHI_BEARING:g}",
        TraceStatus.formula,
        "kN",
    )


def _one_bearing(
    beam: Beam,
    member: Member,
    j: int,
    kzcp: float,
    cases: list[LoadCase],
    lifts_now: bool,
    traces: bool,
    rows: set[RowUsed] | None,
) -> BearingCheck:
    bearing = beam.bearings[j]
    area = beam.b_mm * bearing.length_mm
    best: tuple[float, float, float, LoadCase] | None = None
    lowest: tuple[float, LoadCase] | None = None
    qr_by_kd: dict[float, float] = {}
    dead: tuple[float, float, float, LoadCase] | None = None  # under 1.4D alone, governing or not
    for case in cases:
        qr = qr_by_kd.get(case.kd)
        if qr is None:
            fcp = factored_strength(member.fcp_mpa, case.kd, member.kscp, member.kt)
            qr = qr_by_kd[case.kd] = bearing_qr(fcp, area, 1.0, kzcp)
        reaction = case.result.reactions_n[j]
        qf = 0.0 if reaction < 0.0 else reaction  # max(reaction, 0.0): a downward reaction loads the bearing
        util = qf / qr
        if best is None or util > best[0]:
            best = (util, qr, qf, case)
        if case.combo.dead_load_only and (dead is None or util > dead[0]):
            dead = (util, qr, qf, case)
        if lowest is None or reaction < lowest[0]:
            lowest = (reaction, case)
    assert best is not None
    assert lowest is not None
    util, qr, qf, case = best
    uplift = -lowest[0] if lowest[0] < 0 else None
    clause = "CSA O86-19 7.5.9 (memory)" if beam.material is Material.glulam else "CSA O86-19 6.5.6 (memory)"
    trace = lines_for(traces, rows)
    if trace is not None:
        _trace(trace, beam, member, bearing, area, kzcp, clause, case, qr)
        if dead is not None:
            du, dr, dd, dc = dead
            how = lambda: f"Qf {dd * KN_PER_N:.4g} kN vs Qr {dr * KN_PER_N:.4g} kN with KD {dc.kd:g}"  # noqa: E731
            dead_load_line(trace, case, du, clause, how)
    return assembled(
        BearingCheck,
        {
            "support": j + 1,
            "qr_kn": qr * KN_PER_N,
            "qf_kn": qf * KN_PER_N,
            "utilisation": util,
            "length_mm": bearing.length_mm,
            "combination": case_label(case),
            "clause": clause,
            "trace": [] if trace is None else trace.lines,
            "uplift_kn": None if uplift is None else uplift * KN_PER_N,
            "uplift_combination": None if uplift is None else case_label(lowest[1]),
            "lifts_now": lifts_now,
            "uplift_specified_kn": None,  # set by bearing_checks where a support lifts in service too
            "uplift_snow": uplift is not None and carries_snow(lowest[1], beam),
            "dead_load_only": case.combo.dead_load_only,
            "snow_in_combination": carries_snow(case, beam),
            "dead_load_utilisation": None if dead is None else dead[0],
        },
    )


def bearing_checks(
    beam: Beam,
    member: Member,
    model: BeamModel,
    cases: list[LoadCase],
    *,
    traces: bool = True,
    rows: set[RowUsed] | None = None,
) -> list[BearingCheck]:
    """Bearing at each support (O86-19 6.5.6 lumber, 7.5.9 glulam; KB = 1.0); traces: False builds none.

    rows: when given, the table rows of each support's governing trace are added to it, and no trace is kept.
    """
    kzcp = sawn_bearing_kzcp(beam.b_mm, beam.d_mm) if beam.material is Material.sawn else 1.0
    dead = beam.loads.dead_kn_m + member.self_weight_n_mm
    now = model.case((dead,) * len(model.elements)).reactions_n  # specified dead load as it stands
    checks = [_one_bearing(beam, member, j, kzcp, cases, now[j] < 0, traces, rows) for j in range(len(beam.bearings))]
    if all(c.uplift_kn is None for c in checks):
        return checks
    # a factored case lifts a support: does it lift in service too (specified loads, no load factor)?
    least = _specified_least(model, dead, beam.loads.live_kn_m + beam.loads.snow_kn_m, now)
    return [
        c.model_copy(update={"uplift_specified_kn": -least[j] * KN_PER_N})
        if c.uplift_kn is not None and least[j] < 0
        else c
        for j, c in enumerate(checks)
    ]


def _specified_least(model: BeamModel, dead: float, variable: float, dead_alone: Sequence[float]) -> list[float]:
    """Each support's least reaction under specified loads: D everywhere, L + S on every pattern of parts, N.

    dead_alone: the reactions under D alone. Only sought when a factored case lifts a support: a negative
    value is an uplift in service (no load factor).
    """
    out = list(dead_alone)
    for pattern in live_patterns(len(model.elements)):
        reactions = model.case(tuple(dead + (variable if on else 0.0) for on in pattern)).reactions_n
        out = [min(a, b) for a, b in zip(out, reactions, strict=True)]
    return out
