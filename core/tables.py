"""Data tables of the standard, loaded once from ``core/data/*.csv``.

Each CSV starts with ``#`` lines naming the standard, edition, table and the meaning of the
``status`` column (``verified``, ``confirmed`` or ``memory``; a confirmed row names its source in
``confirmed_by``). Rows are looked up by name,
never by position. Reading the package's own read-only data is the only file access in ``core``.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
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


@cache
def load(name: str) -> Table:
    """Load the table ``core/data/<name>.csv`` (cached; the files are read-only package data)."""
    text = resources.files("core").joinpath("data", f"{name}.csv").read_text(encoding="utf-8")
    header = tuple(line[1:].strip() for line in text.splitlines() if line.startswith("#"))
    body = [line for line in text.splitlines() if line and not line.startswith("#")]
    rows = tuple(overrides.overlay(name, dict(r)) for r in csv.DictReader(body))  # a firm's records, if any
    return Table(name=name, header=header, rows=rows)


def use_firm_records(records: list[overrides.TableRecord]) -> None:
    """Apply a firm's verifications and corrections (``core/overrides.py``) to every lookup from now on."""
    global _GENERATION
    if overrides.use(records):
        load.cache_clear()
        _FOUND.clear()
        _GENERATION += 1


def generation() -> int:
    """A number that changes whenever a firm's records change what a lookup returns (for callers' caches)."""
    return _GENERATION


_GENERATION = 0


def find(name: str, **keys: str) -> dict[str, str]:
    """Return the single row of table ``name`` whose columns equal ``keys``.

    Raises ``KeyError`` naming the table and the keys when no row matches. Hits are memoised
    (the tables are read-only), which keeps repeated rechecks from rescanning them.
    """
    memo_key = (name, tuple(keys.items()))  # in the caller's keyword order: one entry per call site's order
    hit = _FOUND.get(memo_key)
    if hit is not None:
        return hit
    for row in load(name).rows:
        if all(row[k] == v for k, v in keys.items()):
            _FOUND[memo_key] = row
            return row
    msg = f"no row in table {name!r} for {keys}"
    raise KeyError(msg)


_FOUND: dict[tuple[str, tuple[tuple[str, str], ...]], dict[str, str]] = {}


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
