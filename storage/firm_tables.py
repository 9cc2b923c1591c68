"""A firm's table records (verifications and corrections of rows of the standard's tables), stored and synced.

Each record is a ``table_row`` set record written through ``Store.save`` (so it goes into the op log
and reaches the other devices and the office hub like any edit). ``apply`` makes the table lookups
of this process honour the records of the database at hand.
"""

from __future__ import annotations

import json
import time
from dataclasses import dataclass
from typing import Any

from pydantic import ValidationError

from core import overrides, tables
from core.overrides import TableRecord

RECORD_AGAIN = "record the row again (bracewalk tables verify)"
FIX_HINT = f"{RECORD_AGAIN}, or resolve its conflict if the sync screen lists one"


@dataclass(frozen=True)
class SetAside:
    """A stored table record that is not a whole, valid record: not applied, and said so wherever rows are listed."""

    record_id: str
    reason: str

    @property
    def table(self) -> str:
        """The table its id names."""
        return self.record_id.partition(":")[0]

    @property
    def row(self) -> str:
        """The row label its id names."""
        return self.record_id.partition(":")[2]

    @property
    def words(self) -> str:
        """What the reviewer reads: the row, why its record is not used, what the rechecks use instead."""
        return (
            f"{self.table} row {self.row}: the firm's record of this row is not valid ({self.reason}); "
            f"its correction (or verification) is not used until it is fixed: rechecks use the row as published. "
            f"To fix it, {FIX_HINT}."
        )


def whole_record(record_id: str, data: Any) -> TableRecord:
    """The record stored under ``record_id`` when it is whole and valid; ValueError naming what is not.

    Whole and valid: it passes ``TableRecord`` (a correction names column, value and source together), its
    id names its table and row, the row is in the published table, and a corrected column is one of its columns.
    The op checks take each field alone, so a record merged from several edits is checked here, whole.
    """
    try:
        rec = TableRecord.model_validate(data)
    except ValidationError as exc:
        e = exc.errors()[0]
        where = ".".join(str(p) for p in e["loc"])
        msg = f"{where + ': ' if where else ''}{str(e['msg']).removeprefix('Value error, ')}"
        raise ValueError(msg) from exc
    if overrides.record_id(rec.table, rec.row) != record_id:
        msg = f"it names table {rec.table!r} row {rec.row!r}, not the row of its id"
        raise ValueError(msg)
    row = _published(rec.table, rec.row)
    if row is None:
        msg = f"no row {rec.row!r} in the published table {rec.table!r}"
        raise ValueError(msg)
    if rec.column is not None and rec.column not in row:
        msg = f"column {rec.column!r} is not a column of table {rec.table!r}"
        raise ValueError(msg)
    return rec


def why_not_whole(record_id: str, data: Any) -> str:
    """Why ``data`` is not a whole, valid record for ``record_id`` ('' when it is)."""
    try:
        whole_record(record_id, data)
    except ValueError as exc:
        return str(exc)
    return ""


def read(db: Any) -> tuple[list[TableRecord], list[SetAside]]:
    """The firm's table records in this database that are whole and valid, and those set aside (why)."""
    good: list[TableRecord] = []
    aside: list[SetAside] = []
    for rid, text in db.execute("SELECT id, data FROM table_row ORDER BY id").fetchall():
        try:
            good.append(whole_record(rid, json.loads(text)))
        except ValueError as exc:
            aside.append(SetAside(rid, str(exc)))
    return good, aside


def records(db: Any) -> list[TableRecord]:
    """The firm's table records in this database that the lookups apply (whole and valid)."""
    return read(db)[0]


def set_aside(db: Any) -> list[SetAside]:
    """The firm's table records in this database that are not applied, each with why."""
    return read(db)[1]


def apply(db: Any) -> list[SetAside]:
    """Make every table lookup in this process honour this database's valid firm records; return those set aside.

    A record that is not whole and valid never stops the caller (opening the database, a recheck): it is
    left out, so the lookups use the published row, and ``set_aside`` names it for the reviewer.
    """
    good, aside = read(db)
    tables.use_firm_records(good)
    return aside


def _published(table: str, label: str) -> dict[str, str] | None:
    """The row named ``label`` of ``table`` as published (None if none; ``table`` is one of ``overrides.KEYS``)."""
    return next((r for r in tables.published(table).rows if overrides.row_label(table, r) == label), None)


def published_row(table: str, label: str) -> dict[str, str]:
    """The row named ``label`` of ``table`` as published in ``core/data`` (KeyError naming both if none)."""
    if table not in overrides.KEYS:
        msg = f"no table {table!r}; tables: {', '.join(overrides.KEYS)}"
        raise KeyError(msg)
    row = _published(table, label)
    if row is None:
        labels = ", ".join(overrides.row_label(table, r) for r in tables.published(table).rows)
        msg = f"no row {label!r} in table {table!r}; rows: {labels}"
        raise KeyError(msg)
    return dict(row)


def record(
    store: Any,
    table: str,
    label: str,
    by: str,
    edition: str,
    page: int,
    column: str | None = None,
    value: str | None = None,
    source: str = "",
) -> TableRecord:
    """Record a verification (or, with column/value/source, a correction) of one row; returns the record."""
    row = published_row(table, label)
    if column is not None and column not in row:
        msg = f"no column {column!r} in table {table!r}; columns: {', '.join(row)}"
        raise KeyError(msg)
    at = time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime(store.wall_ms() / 1000))
    fields = {
        "table": table,
        "row": label,
        "by": by.strip(),
        "edition": edition,
        "page": page,
        "at": at,
        "column": column,
        "value": value,
        "source": source,
    }
    rec = TableRecord.model_validate(fields)
    data = rec.model_dump(mode="json")
    store.save("table_row", overrides.record_id(table, label), data)
    apply(store.db)
    return rec


def listing(db: Any) -> list[tuple[str, str, str, str]]:
    """[(table, row label, status, provenance)] of every row, as this firm's records make them.

    A row whose firm record is set aside reads as published, and its provenance says why the record is not used.
    """
    aside = {(a.table, a.row): a.words for a in apply(db)}
    out = []
    for table in overrides.KEYS:
        for row in tables.load(table).rows:
            label = overrides.row_label(table, row)
            note = aside.get((table, label), row.get("confirmed_by", ""))
            out.append((table, label, row["status"], note))
    return out
