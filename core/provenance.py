"""Provenance summary of the data tables (for the README; ``python -m core.provenance``)."""

from __future__ import annotations

from core import tables


def provenance_rows() -> list[str]:
    """One markdown row per table: name, source, row count, counts per status, and who confirmed rows."""
    out = [
        "| table | source | rows | verified | confirmed | memory | confirmed by |",
        "| --- | --- | --- | --- | --- | --- | --- |",
    ]
    for name in sorted(tables.TABLE_NAMES):
        t = tables.load(name)
        statuses = [r["status"] for r in t.rows]
        out.append(
            f"| {name} | {t.source} | {len(statuses)} | {statuses.count('verified')} | "
            f"{statuses.count('confirmed')} | {statuses.count('memory')} | {_confirmers(t)} |"
        )
    return out


def _confirmers(table: tables.Table) -> str:
    names: list[str] = []
    for row in table.rows:
        for name in row.get("confirmed_by", "").split("; "):
            if name and name not in names:
                names.append(name)
    return "; ".join(names) or "-"


if __name__ == "__main__":
    print("\n".join(provenance_rows()))
