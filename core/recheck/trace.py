"""Trace helpers shared by the checks: one ``FactorTrace`` line, and the combination label of a case."""

from __future__ import annotations

from core.kinds import TraceStatus
from core.recheck.cases import LoadCase
from core.results import FactorTrace, RowUsed, trace_rows

KN_PER_N = 1e-3  # unit conversion: multiply a force in N by this to get kN
KNM_PER_NMM = 1e-6  # unit conversion: a moment in N*mm to kN*m


def line(
    *,
    symbol: str,
    value: float | str | None,
    unit: str = "",
    clause: str = "",
    source: str = "",
    status: str = TraceStatus.formula,
) -> FactorTrace:
    """One FactorTrace (status: a TraceStatus value).

    Trace lines are frozen, so equal lines are built once and shared (most repeat from beam to beam).
    """
    key = (symbol, type(value), value, unit, clause, source, status)
    hit = _LINES.get(key)
    if hit is None:
        if len(_LINES) >= _LINES_MAX:
            _LINES.clear()
        hit = _LINES[key] = FactorTrace(
            symbol=symbol, value=value, unit=unit, clause=clause, source=source, status=TraceStatus(status)
        )
    return hit


_LINES: dict[tuple[object, ...], FactorTrace] = {}
_LINES_MAX = 50_000


def note(
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
        trace.append(line(symbol=symbol, value=value, unit=unit, clause=clause, source=source, status=status))


def kd_trace(case: LoadCase) -> FactorTrace:
    """The KD line of a check's trace (CSA O86-19 5.3.2), with how KD was chosen."""
    return line(symbol="KD", value=case.kd, clause="CSA O86-19 5.3.2", source=case.kd_note, status=TraceStatus.memory)


def case_label(case: LoadCase) -> str:
    """The combination and live/snow pattern of a case, as the result names it."""
    if case.relieving:
        return f"{case.combo.name} (1.25D and L/S on {case.pattern}; 0.9D on {case.relieving})"
    if not case.pattern or case.pattern == "all spans":
        return case.combo.name
    return f"{case.combo.name} (L/S on {case.pattern})"


def keep_rows(rows: set[RowUsed] | None, trace: list[FactorTrace] | None) -> None:
    """Add the table rows of a check's trace lines to ``rows`` when the rows used are being collected."""
    if rows is not None and trace is not None:
        rows.update(trace_rows(trace))
