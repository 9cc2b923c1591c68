"""Machine speed at the start and the end of a bench run, the reference beside every other row.

Figures from runs on different machines (or on one machine whose speed drifted) compare only beside it.
The absolute aims of issue 14 ("< 3 s here") were set and met on one machine; on another the same code took
three to four times as long (2026-12-03: the recheck rows 3-4x and the 100k-op sync 3x slower than the
figures recorded before, with no change to either path, and spreads of 30-97 %). Two small fixed workloads:

- Python: 10 million integer additions in a loop inside a function (the interpreter: recheck, merge, notice);
- SQLite: 100,000 rows of (text, integer, text) inserted into a fresh in-memory table with a two-column index,
  in one transaction (the database engine: the sync's writes, the stored results).

Each is the median of 5 (quick: 3). No aim: the row says what the other rows were measured on.
"""

from __future__ import annotations

import sqlite3

from bench.common import Row, Sample, measure

LOOP_N = 10_000_000
ROWS_N = 100_000


def python_loop() -> int:
    """``LOOP_N`` integer additions in a plain loop."""
    total = 0
    for i in range(LOOP_N):
        total += i
    return total


def sqlite_rows() -> None:
    """``ROWS_N`` rows into an indexed in-memory table, one transaction."""
    con = sqlite3.connect(":memory:")
    try:
        con.execute("CREATE TABLE t (origin TEXT, seq INTEGER, payload TEXT)")
        con.execute("CREATE INDEX t_key ON t (origin, seq)")
        with con:
            con.executemany(
                "INSERT INTO t VALUES (?, ?, ?)",
                ((f"device-{i % 7}", i, '{"notes":"checked at gridline ' + str(i % 30) + '"}') for i in range(ROWS_N)),
            )
    finally:
        con.close()


def speed(quick: bool = False) -> tuple[Sample, Sample]:
    """(Python loop, SQLite rows) timings on this machine now."""
    repeats = 3 if quick else 5
    return measure(python_loop, repeats), measure(sqlite_rows, repeats)


def row(start: tuple[Sample, Sample], end: tuple[Sample, Sample]) -> Row:
    """The table row: both workloads at the start and at the end of the run."""
    (py0, sq0), (py1, sq1) = start, end
    drift = max(py0.median_s, py1.median_s) / min(py0.median_s, py1.median_s)
    return Row(
        f"machine: {LOOP_N // 1_000_000}M Python additions; {ROWS_N:,} SQLite rows (at the start -> at the end)",
        f"{py0.median_s:.2f} -> {py1.median_s:.2f} s; {sq0.median_s * 1000:.0f} -> {sq1.median_s * 1000:.0f} ms",
        "",
        f"{drift:.2f}x drift",
        "none: what the rows above ran on",
        None,
        f"{max(py0.spread_pct, py1.spread_pct):.0f}%",
    )
