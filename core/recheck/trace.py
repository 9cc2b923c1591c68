"""Trace helpers shared by the checks: lines, where a check writes them, and the combination label of a case.

One ``FactorTrace`` line (``line``), where a check writes its lines (``Lines``: a kept trace, or the table
rows it names), and ``case_label``.
"""

from __future__ import annotations

from collections.abc import Callable

from core.kinds import TraceStatus
from core.member import Member
from core.recheck.cases import LoadCase, case_kd_note
from core.results import TABLE_STATUSES, FactorTrace, RowUsed

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
    row: str = "",
) -> FactorTrace:
    """One FactorTrace (status: a TraceStatus value; row: the rule it rests on, where not its source).

    Trace lines are frozen, so equal lines are built once and shared (most repeat from beam to beam).
    """
    key = (symbol, type(value), value, unit, clause, source, status, row)
    hit = _LINES.get(key)
    if hit is None:
        if len(_LINES) >= _LINES_MAX:
            _LINES.clear()
        hit = _LINES[key] = FactorTrace(
            symbol=symbol, value=value, unit=unit, clause=clause, source=source, status=TraceStatus(status), row=row
        )
    return hit


_LINES: dict[tuple[object, ...], FactorTrace] = {}
_LINES_MAX = 50_000


class Lines:
    """Where a check writes the lines of its governing case's trace.

    Kept as ``FactorTrace`` lines (``lines``: a traced recheck), or, when ``rows`` is given, reduced to the
    table rows they name and added to ``rows`` (``core.recheck.recheck_with_rows``): the same calls with the
    same arguments either way, so the rows are exactly those of the trace a traced recheck keeps, and no
    ``FactorTrace`` is built for them.
    """

    def __init__(self, rows: set[RowUsed] | None = None) -> None:
        self.lines: list[FactorTrace] = []
        self.rows = rows

    def add(
        self,
        symbol: str,
        value: float | str | None,
        clause: str,
        source: str,
        status: str,
        unit: str = "",
        row: str = "",
    ) -> None:
        """One line (status: a TraceStatus value); as a row (``row`` or else its source), only for a table's status."""
        rows = self.rows
        if rows is None:
            self.lines.append(
                line(symbol=symbol, value=value, unit=unit, clause=clause, source=source, status=status, row=row)
            )
            return
        table = _TABLE_STATUS.get(status)
        if table is not None:
            rows.add((clause, row or source, table))

    @property
    def kept(self) -> bool:
        """Whether the lines themselves are kept (a traced recheck), not only the table rows they name.

        Where only rows are kept, a line gives its ``row``, or else its source, and only under a table's status:
        the source of a formula or input line, or of a line keyed to its ``row``, is then never read, so it is
        formatted only when ``kept`` (the rows come out the same: ``tests/core/test_rows_used.py``).
        """
        return self.rows is None


# the statuses of a table row (core.results.TABLE_STATUSES), by value
_TABLE_STATUS: dict[str, TraceStatus] = {s.value: s for s in TABLE_STATUSES}


def kept(trace: Lines | None) -> bool:
    """Whether a check's trace lines are kept (``Lines.kept``): False with no trace, or only its rows, kept."""
    return trace is not None and trace.rows is None


def lines_for(traces: bool, rows: set[RowUsed] | None) -> Lines | None:
    """Where a check's trace lines go: into ``rows``, into a kept trace, or nowhere (None).

    Into ``rows`` when the rows used are collected (no trace is then kept), into a kept trace when
    ``traces``, else nowhere: nothing is formatted.
    """
    if rows is not None:
        return Lines(rows)
    return Lines() if traces else None


def note(
    trace: Lines | None,
    symbol: str,
    value: float | None,
    clause: str,
    source: str,
    status: str,
    unit: str = "",
    row: str = "",
) -> None:
    """Write one trace line when a trace or its rows are being kept (status: a TraceStatus value)."""
    if trace is not None:
        trace.add(symbol, value, clause, source, status, unit, row)


def add_kd(trace: Lines, case: LoadCase) -> None:
    """The KD line of a check's trace (CSA O86-19 5.3.2), with how KD was chosen (its row: KD_RULE)."""
    how = case_kd_note(case) if trace.kept else ""
    trace.add("KD", case.kd, "CSA O86-19 5.3.2", how, TraceStatus.memory, row=KD_RULE)


# the rule every KD line rests on (CSA O86-19 5.3.2, Table 5.1; reference o86.md section 3.1), one row for all
KD_RULE = (
    "KD by load duration: 0.65 for dead load alone (1.4D); standard term 1.0, or 1 - 0.5 log(PL/PS) >= 0.65 "
    "where the specified long-term load PL exceeds the standard-term load PS"
)


def dead_load_line(
    trace: Lines, governing: LoadCase, utilisation: float | None, clause: str, how: Callable[[], str]
) -> None:
    """The line of a check that fails under 1.4D alone while another case governs it: what makes it urgent.

    ``utilisation``: the check's under 1.4D (None where it has none); ``how``: that case's numbers in words,
    formatted only when the line is written. ``core.findings.dead_load_words`` says the same in the finding.
    """
    if not trace.kept or utilisation is None or utilisation <= 1.0 or governing.combo.dead_load_only:
        return  # a formula line: it names no table row
    trace.add("dead load alone (1.4D)", utilisation, clause, how(), TraceStatus.formula)


def strength_line(trace: Lines, member: Member, symbol: str, value_mpa: float) -> None:
    """A specified strength's trace line (fv, fcp), keyed to the grade row the member's trace names.

    The same row as the member's "grade" line (the row every strength of the member comes from), so it adds
    no table row of its own to what the recheck used.
    """
    grade = grade_line(member)
    trace.add(symbol, value_mpa, grade.clause, grade.source, grade.status.value, "MPa")


def grade_line(member: Member) -> FactorTrace:
    """The member's "grade" trace line: the table row every specified strength of the member comes from."""
    return next(t for t in member.trace if t.symbol == "grade")


def case_label(case: LoadCase) -> str:
    """The combination and live/snow pattern of a case, as the result names it."""
    if case.relieving:
        return f"{case.combo.name} (1.25D and L/S on {case.pattern}; 0.9D on {case.relieving})"
    if not case.pattern or case.pattern == "all spans":
        return case.combo.name
    return f"{case.combo.name} (L/S on {case.pattern})"
