"""A firm's table records (verifications and corrections of rows of the standard's tables), stored and synced.

Each record is a ``table_row`` set record written through ``Store.save`` (so it goes into the op log
and reaches the other devices and the office hub like any edit). ``apply`` makes the table lookups
of this process honour the records of the database at hand.
"""

from __future__ import annotations

import json
import time
from typing import Any

from core import overrides, tables
from core.overrides import TableRecord


def records(db: Any) -> list[TableRecord]:
    """The firm's table records in this database."""
    rows = db.execute("SELECT data FROM table_row ORDER BY id").fetchall()
    return [TableRecord.model_validate(json.loads(r[0])) for r in rows]


def apply(db: Any) -> None:
    """Make every table lookup in this process honour this database's firm records."""
    tables.use_firm_records(records(db))


def published_row(table: str, label: str) -> dict[str, str]:
    """The row named ``label`` of ``table`` as published in ``core/data`` (KeyError naming both if none)."""
    if table not in overrides.KEYS:
        msg = f"no table {table!r}; tables: {', '.join(overrides.KEYS)}"
        raise KeyError(msg)
    saved = overrides.in_use()
    tables.use_firm_records([])
    try:
        for row in tables.load(table).rows:
            if overrides.row_label(table, row) == label:
                return row
    finally:
        tables.use_firm_records(list(saved.values()))
    labels = ", ".join(overrides.row_label(table, r) for r in tables.load(table).rows)
    msg = f"no row {label!r} in table {table!r}; rows: {labels}"
    raise KeyError(msg)


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
    """[(table, row label, status, provenance)] of every row, as this firm's records make them."""
    apply(db)
    out = []
    for table in overrides.KEYS:
        for row in tables.load(table).rows:
            out.append((table, overrides.row_label(table, row), row["status"], row.get("confirmed_by", "")))
    return out
