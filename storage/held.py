"""Bundles held for a newer record schema, applied once this app reads them (after it was updated).

An import of a bundle written by a newer app keeps a copy of the file (``<blobs>/held/<sha>.zip``) and a
``held_bundle`` row, and applies nothing (``storage.bundle.import_bundle``). Once the app is updated to
a schema that reads it, ``apply_held`` imports each held copy, oldest first, with the same checks as any
import; an applied one is forgotten (row and copy). The reviewer need not keep or find the file again.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from storage.bundle import ImportReport, Progress, import_bundle
from storage.db import SCHEMA_VERSION, transaction
from storage.store import Store


@dataclass(frozen=True)
class HeldBundle:
    """A bundle held whole because a newer app wrote it: its SHA-256, its record schema, the kept copy."""

    sha256: str
    schema_version: int
    path: Path

    @property
    def readable(self) -> bool:
        """True when this app reads its record schema (the app was updated since it was held)."""
        return self.schema_version <= SCHEMA_VERSION


def held_bundles(store: Store) -> list[HeldBundle]:
    """Every held bundle, in the order they were held."""
    rows = store.db.execute("SELECT bundle_sha256, schema_version, path FROM held_bundle ORDER BY rowid").fetchall()
    return [HeldBundle(sha, int(version), Path(path)) for sha, version, path in rows]


def apply_held(store: Store, progress: Progress | None = None) -> list[tuple[HeldBundle, ImportReport]]:
    """Import every held bundle this app now reads, oldest first; each one applied is forgotten.

    A held copy that is missing, or that an import refuses (a device revoked meanwhile, say), stays held
    and its report says why; nothing is dropped.
    """
    out = []
    for held in [h for h in held_bundles(store) if h.readable]:
        if not held.path.is_file():
            out.append((held, ImportReport("refused", reason=f"the held copy {held.path} is missing")))
            continue
        report = import_bundle(store, held.path, progress)
        if report.outcome == "applied":
            with transaction(store.db):
                store.db.execute("DELETE FROM held_bundle WHERE bundle_sha256 = ?", [held.sha256])
            held.path.unlink()
        out.append((held, report))
    return out


__all__ = ["HeldBundle", "apply_held", "held_bundles"]
