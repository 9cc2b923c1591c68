"""The table rows a recheck used, with how far each is established (issue 16 item 6).

A notice names every table row its items rest on and whether that row was confirmed by an independent
source, verified against the standard's text (by the firm, or in the data file), or entered from memory.
Rows entered from memory are listed for the reviewer to acknowledge before a notice is issued.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from core.kinds import TraceStatus
from core.results import Recheck
from core.results import rows_used as row_set

TABLE_STATUSES = (TraceStatus.verified, TraceStatus.confirmed, TraceStatus.memory)
FIRM_MARK = "verified by "  # core.overrides.note: a firm's verification names who verified the row


@dataclass(frozen=True, order=True)
class RowUsed:
    """One table row (or tabulated rule) a recheck used: its clause, the row as traced, and its status."""

    clause: str
    source: str
    status: TraceStatus

    @property
    def label(self) -> str:
        """'CSA O86-19 Table 7.3: glulam_grades row species D.Fir-L, ...' (what the reviewer acknowledges)."""
        return ": ".join(p for p in (self.clause, self.source) if p)

    @property
    def status_short(self) -> str:
        """'MEMORY', 'confirmed', 'verified by the firm' or 'verified' (a table cell)."""
        if self.status is TraceStatus.memory:
            return "MEMORY"
        if self.status is TraceStatus.verified:
            return "verified by the firm" if FIRM_MARK in self.source else "verified"
        return "confirmed"

    @property
    def status_words(self) -> str:
        """'confirmed', 'verified by the firm', 'verified against the standard' or 'MEMORY (not checked)'."""
        if self.status is TraceStatus.memory:
            return "MEMORY (not checked against the standard)"
        if self.status is TraceStatus.verified:
            return "verified by the firm" if FIRM_MARK in self.source else "verified against the standard"
        return "confirmed (independent source)"


def rows_used(results: Iterable[Recheck]) -> list[RowUsed]:
    """Every distinct table row the rechecks used (status verified, confirmed or memory), memory rows first."""
    found = {RowUsed(clause, source, TraceStatus(status)) for r in results for clause, source, status in row_set(r)}
    return sorted(found, key=lambda r: (r.status is not TraceStatus.memory, r.clause, r.source))


def memory_rows(rows: Iterable[RowUsed]) -> list[str]:
    """The labels of the rows entered from memory (what a reviewer must acknowledge), in order."""
    return [r.label for r in rows if r.status is TraceStatus.memory]


def counts(rows: Iterable[RowUsed]) -> str:
    """'18 table rows: 12 memory, 6 confirmed, 0 verified'."""
    rows = list(rows)
    by = {s: sum(r.status is s for r in rows) for s in TABLE_STATUSES}
    return (
        f"{len(rows)} table rows: {by[TraceStatus.memory]} memory, {by[TraceStatus.confirmed]} confirmed, "
        f"{by[TraceStatus.verified]} verified"
    )
