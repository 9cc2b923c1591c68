"""Provenance summary of the data tables (for the README; ``python -m core.provenance``)."""

from __future__ import annotations

from core import tables


def provenance_rows() -> list[str]:
    """One markdown row per table: name, source, row count, and counts per status."""
    out = ["| table | source | rows | verified | confirmed | memory |", "| --- | --- | --- | --- | --- | --- |"]
    for name in sorted(tables.TABLE_NAMES):
        t = tables.load(name)
        statuses = [r["status"] for r in t.rows]
        out.append(
            f"| {name} | {t.source} | {len(statuses)} | {statuses.count('verified')} | "
            f"{statuses.count('confirmed')} | {statuses.count('memory')} |"
        )
    return out


if __name__ == "__main__":
    print("\n".join(provenance_rows()))
