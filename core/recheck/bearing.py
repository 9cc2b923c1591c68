"""Bearing at each support (CSA O86-19 6.5.6 sawn lumber, 7.5.9 glulam) and uplift."""

from __future__ import annotations

from core.analysis import BeamModel
from core.assembled import assembled
from core.clauses.bearing import bearing_qr, sawn_bearing_kzcp
from core.clauses.factors import factored_strength
from core.kinds import TraceStatus
from core.member import Member
from core.models import Beam, Bearing, Material
from core.recheck.cases import LoadCase, carries_snow
from core.recheck.trace import KN_PER_N, case_label, kd_trace, keep_rows, line
from core.results import BearingCheck, FactorTrace, RowUsed


def _kzcp_line(beam: Beam, kzcp: float) -> FactorTrace:
    """The KZcp trace line: the sawn-lumber formula of O86-19 6.5.6.2.3 with r = b/d, or 1.0 for glulam."""
    if beam.material is Material.glulam:
        return line(
            symbol="KZcp",
            value=kzcp,
            clause="CSA O86-19 7.5.9 (memory)",
            source="glulam: no KZcp (1.0)",
            status=TraceStatus.memory,
        )
    return line(
        symbol="KZcp",
        value=kzcp,
        clause="CSA O86-19 6.5.6.2.3 (memory)",
        source=f"r = b/d = {beam.b_mm / beam.d_mm:.3f}: 1.0 + 0.15 (r - 1), at least 1.0, at most 1.15",
        status=TraceStatus.memory,
    )


def _trace(bearing: Bearing, area: float, kzcp: FactorTrace, clause: str, case: LoadCase) -> list[FactorTrace]:
    return [
        line(
            symbol="Ab",
            value=area,
            unit="mm2",
            source=f"b x bearing length {bearing.length_mm:g} mm",
            status=TraceStatus.input,
        ),
        line(symbol="KB", value=1.0, clause=clause, source="end bearing / conservative", status=TraceStatus.memory),
        kzcp,
        kd_trace(case),
    ]


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
        if lowest is None or reaction < lowest[0]:
            lowest = (reaction, case)
    assert best is not None
    assert lowest is not None
    util, qr, qf, case = best
    uplift = -lowest[0] if lowest[0] < 0 else None
    clause = "CSA O86-19 7.5.9 (memory)" if beam.material is Material.glulam else "CSA O86-19 6.5.6 (memory)"
    trace = _trace(bearing, area, _kzcp_line(beam, kzcp), clause, case) if traces or rows is not None else None
    keep_rows(rows, trace)
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
            "trace": trace if traces and trace is not None else [],
            "uplift_kn": None if uplift is None else uplift * KN_PER_N,
            "uplift_combination": None if uplift is None else case_label(lowest[1]),
            "lifts_now": lifts_now,
            "dead_load_only": case.combo.dead_load_only,
            "snow_in_combination": carries_snow(case, beam),
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

    rows: when given, the table rows of each support's governing trace are added to it.
    """
    kzcp = sawn_bearing_kzcp(beam.b_mm, beam.d_mm) if beam.material is Material.sawn else 1.0
    dead = beam.loads.dead_kn_m + member.self_weight_n_mm
    now = model.case((dead,) * len(model.elements)).reactions_n  # specified dead load as it stands
    return [_one_bearing(beam, member, j, kzcp, cases, now[j] < 0, traces, rows) for j in range(len(beam.bearings))]
