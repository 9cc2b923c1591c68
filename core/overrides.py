"""A firm's own records about the standard's tables: a row verified against its copy, or a value corrected.

A person with the standard checks one row of ``core/data/<table>.csv`` against their copy of
CSA O86-19 and records who, when and where (edition and page); the row then reads ``verified`` for
that firm. A correction (an override) replaces one value of the row and names its source. Rows are
named by their key columns (``KEYS``), never by position, so a row added to a CSV never moves a
firm's record onto another row. Pure: the storage layer reads the records and hands them to ``use``.
"""

from __future__ import annotations

import math
from typing import Annotated, Literal

from pydantic import AfterValidator, BaseModel, ConfigDict, Field, model_validator

from core.columns import COLUMN_WORDS, column_words

# the columns that name a row of each table (the rest are its values and provenance)
KEYS: dict[str, tuple[str, ...]] = {
    "glulam_grades": ("species", "grade"),
    "sawn_grades": ("species", "grade"),
    "kzb": ("larger_dim_max_mm",),
    "service_factors": ("material", "smaller_dim_rule"),
    "treatment_factors": ("material", "treatment", "service"),
    "effective_length": ("le_case",),
    "glulam_sizes": ("width_mm",),
    "glulam_depths": ("depth_mm",),
    "lumber_sizes": ("nominal",),
    "deflection_limits": ("use",),
    "densities": ("material", "species"),
}
PROVENANCE_COLUMNS = ("status", "confirmed_by")
EDITIONS = ("O86-19",)


def _known_table(v: str) -> str:
    """A table of ``KEYS`` (ValueError naming the value and the tables allowed)."""
    if v not in KEYS:
        msg = f"table {v!r}; allowed: {', '.join(KEYS)}"
        raise ValueError(msg)
    return v


def _corrected_value(v: str | None) -> str | None:
    """A corrected table value: the text of a positive finite number (ValueError naming the value)."""
    if v is None:
        return v
    try:
        number = float(v)
    except ValueError as exc:
        msg = f"value {v!r}: a corrected table value is a number"
        raise ValueError(msg) from exc
    if not math.isfinite(number) or number <= 0:
        msg = f"value {v!r}: a corrected table value is a positive finite number"
        raise ValueError(msg)
    return v


# the rules travel with the field types, so a check of one field alone (an imported op) applies them too
TableName = Annotated[str, AfterValidator(_known_table)]
CorrectedValue = Annotated[str | None, AfterValidator(_corrected_value)]


class TableRecord(BaseModel):
    """A firm's verification of one table row, optionally with one corrected value and its source."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    table: TableName
    row: str  # the row's key values joined by "/", e.g. "D.Fir-L/24f-E"
    by: str = Field(min_length=1, max_length=200)
    edition: Literal["O86-19"]
    page: int = Field(ge=1, le=2000)
    at: str = Field(min_length=1, max_length=40)  # UTC, ISO 8601
    column: str | None = None  # the corrected value's column (None: verified as printed)
    value: CorrectedValue = None
    source: str = ""  # where the corrected value comes from (required with a correction)

    @model_validator(mode="after")
    def _correction_complete(self) -> TableRecord:
        """A correction names its column, value and source together."""
        if (self.column is None) != (self.value is None):
            msg = "column and value: give both for a correction, or neither for a verification"
            raise ValueError(msg)
        if self.column is not None:
            if self.column in KEYS[self.table] or self.column in PROVENANCE_COLUMNS:
                msg = f"column {self.column!r}: a key or provenance column is not corrected"
                raise ValueError(msg)
            if not self.source.strip():
                msg = "source: a corrected value names where it comes from"
                raise ValueError(msg)
        return self


def row_label(table: str, row: dict[str, str]) -> str:
    """The name of a row: its key values joined by '/'."""
    return "/".join(row[k] for k in KEYS[table])


def record_id(table: str, label: str) -> str:
    """The id of a firm's record about a row (one record per row; a later one replaces it)."""
    return f"{table}:{label}"


def note(record: TableRecord) -> str:
    """Provenance text for a row the firm verified or corrected ('fv corrected to 1.8 MPa (...), verified by ...')."""
    unit = COLUMN_WORDS.get(record.column or "", ("", ""))[1]
    unit = f" {unit}" if unit else ""
    what = (
        ""
        if record.column is None
        else f"{column_words(record.column)} corrected to {record.value}{unit} ({record.source}), "
    )
    return f"{what}verified by {record.by} against CSA {record.edition} p. {record.page}, {record.at}"


_IN_USE: dict[tuple[str, str], TableRecord] = {}


def in_use() -> dict[tuple[str, str], TableRecord]:
    """The firm records the tables currently apply, by (table, row label)."""
    return dict(_IN_USE)


def use(records: list[TableRecord]) -> bool:
    """Make the tables apply these firm records (replacing any before); True when that changed anything.

    The caller clears the table caches when this returns True (``core.tables.use_firm_records``).
    """
    global _IN_USE
    wanted = {(r.table, r.row): r for r in records}
    if wanted == _IN_USE:
        return False
    _IN_USE = wanted  # one step: a lookup in another thread sees the old records or the new, never none
    return True


def overlay(table: str, row: dict[str, str]) -> dict[str, str]:
    """The row as the firm's records say: status verified, the corrected value, the provenance noted."""
    in_use = _IN_USE  # read once: another thread may put new records in place meanwhile
    if not in_use or table not in KEYS:
        return row
    record = in_use.get((table, row_label(table, row)))
    if record is None:
        return row
    out = dict(row, status="verified", confirmed_by=note(record))
    if record.column is not None and record.value is not None:
        if record.column not in row:
            msg = f"column {record.column!r} is not a column of table {table!r}"
            raise ValueError(msg)
        out[record.column] = record.value
    return out
