"""Data tables of the standard, loaded once from ``core/data/*.csv``.

Each CSV starts with ``#`` lines naming the standard, edition, table and the meaning of the
``status`` column (``verified``, ``confirmed`` or ``memory``; a confirmed row names its source in
``confirmed_by``). Rows are looked up by name,
never by position. Reading the package's own read-only data is the only file access in ``core``.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass, field
from functools import cache
from importlib import resources

from core import overrides


@dataclass(frozen=True)
class Table:
    """One data table: its provenance header lines and its rows as dicts of strings."""

    name: str
    header: tuple[str, ...]
    rows: tuple[dict[str, str], ...]

    @property
    def source(self) -> str:
        """The table's provenance (standard and table lines of the header)."""
        keep = [h for h in self.header if h.startswith(("standard:", "table:", "source:", "clause:"))]
        return "; ".join(h.split(":", 1)[1].strip() for h in keep)


@dataclass
class _Generation:
    """The tables as one set of a firm's records makes them: loaded tables and found rows, filled as asked.

    ``use_firm_records`` puts a new, empty one in place as its last step, after the records themselves, so
    what a generation holds was never computed with records older than it: a lookup that began before the
    change (in another thread: the app's background recheck, a sync) stores what it read in the generation
    it began in, which no caller asks for again, and no new generation starts with a row read before it.
    """

    number: int
    tables: dict[str, Table] = field(default_factory=dict)
    found: dict[tuple[str, tuple[tuple[str, str], ...]], dict[str, str]] = field(default_factory=dict)


_NOW = _Generation(0)


def load(name: str) -> Table:
    """Load the table ``core/data/<name>.csv`` with a firm's records applied (cached per generation)."""
    return _table(_NOW, name)


def _table(now: _Generation, name: str) -> Table:
    """Table ``name`` of generation ``now``, read into it on first use."""
    table = now.tables.get(name)
    if table is None:
        table = now.tables[name] = _read(name)
    return table


def _read(name: str) -> Table:
    """The table ``core/data/<name>.csv`` as the firm's records in use make it."""
    table = published(name)
    rows = tuple(overrides.overlay(name, dict(r)) for r in table.rows)  # a firm's records, if any
    return Table(name=name, header=table.header, rows=rows)


@cache
def published(name: str) -> Table:
    """The table ``core/data/<name>.csv`` as published, without a firm's records (the files are read-only).

    Its rows are shared: a caller that changes one copies it first.
    """
    text = resources.files("core").joinpath("data", f"{name}.csv").read_text(encoding="utf-8")
    header = tuple(line[1:].strip() for line in text.splitlines() if line.startswith("#"))
    body = [line for line in text.splitlines() if line and not line.startswith("#")]
    return Table(name=name, header=header, rows=tuple(csv.DictReader(body)))


def use_firm_records(records: list[overrides.TableRecord]) -> None:
    """Apply a firm's verifications and corrections (``core/overrides.py``) to every lookup from now on."""
    global _NOW
    if overrides.use(records):
        _NOW = _Generation(_NOW.number + 1)  # last: see _Generation


def generation() -> int:
    """A number that changes whenever a firm's records change what a lookup returns (for callers' caches)."""
    return _NOW.number


def find(name: str, **keys: str) -> dict[str, str]:
    """Return the single row of table ``name`` whose columns equal ``keys``.

    Raises ``KeyError`` naming the table and the keys when no row matches. Hits are memoised per
    generation (the tables are read-only), which keeps repeated rechecks from rescanning them.
    """
    now = _NOW
    memo_key = (name, tuple(keys.items()))  # in the caller's keyword order: one entry per call site's order
    hit = now.found.get(memo_key)
    if hit is not None:
        return hit
    for row in _table(now, name).rows:
        if all(row[k] == v for k, v in keys.items()):
            now.found[memo_key] = row
            return row
    msg = f"no row in table {name!r} for {keys}"
    raise KeyError(msg)


def column(name: str, col: str) -> list[str]:
    """Return every value of column ``col`` in table ``name``, in file order."""
    return [row[col] for row in load(name).rows]


TABLE_NAMES = (
    "glulam_grades",
    "sawn_grades",
    "kzb",
    "service_factors",
    "treatment_factors",
    "effective_length",
    "glulam_sizes",
    "glulam_depths",
    "lumber_sizes",
    "deflection_limits",
    "densities",
)
