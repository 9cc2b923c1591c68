"""Sync: export / import a bundle file with progress and a summary; review and resolve conflicts."""

from __future__ import annotations

import json
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from storage import Store
from storage.bundle import export_bundle, import_bundle

Progress = Callable[[float, str], None]


@dataclass
class SyncViewModel:
    """The sync screen. Export and import open their own Store, so they can run in a worker thread."""

    store: Store
    peer: str = "office"

    def status(self) -> str:
        """'12 changes not yet sent to the office · last sync ...' ."""
        pending = self.store.pending_sync_count(self.peer)
        return (
            f"{pending} changes not yet sent to the {self.peer}" if pending else "Everything sent"
        ) + f"  ·  last sync: {self.store.last_sync() or 'never'}  ·  {len(self.store.conflicts())} conflicts to review"

    def export(self, folder: Path, progress: Progress | None = None) -> str:
        """Write a bundle of the changes the peer has not seen into folder; return a summary."""
        worker = Store(self.store.path)
        try:
            folder.mkdir(parents=True, exist_ok=True)
            out = folder / f"bracewalk-{worker.device_code}-{time.strftime('%Y%m%d-%H%M%S')}.bwsync"
            manifest = export_bundle(worker, out, peer=self.peer, progress=progress)
        finally:
            worker.close()
        return f"Wrote {manifest['op_count']} changes and {len(manifest['blobs'])} files to {out}"

    def import_file(self, path: Path, progress: Progress | None = None) -> str:
        """Verify and merge a bundle; return the summary (merged, conflicts to review, or why refused)."""
        worker = Store(self.store.path)
        try:
            report = import_bundle(worker, path, progress=progress)
        finally:
            worker.close()
        if report.outcome == "applied":
            return (
                f"Merged {report.ops_new} new changes of {report.ops_total}; {report.blobs_new} files; "
                f"{report.conflicts_new} conflicts to review"
            )
        if report.outcome == "held":
            return f"Held, not applied: {report.reason}. Update the app, then import again."
        return f"Refused, nothing changed: {report.reason}"

    def conflicts(self) -> list[tuple[int, str]]:
        """[(conflict id, 'beam RB-2 · spans_mm: kept [7200] (device A) · other [7000] (device B)')]."""
        out = []
        for c in self.store.conflicts():
            out.append(
                (
                    int(c["id"]),
                    f"{c['entity']} {self._name(c['entity'], c['record_id'])} · {c['field']}: "
                    f"kept {_short(c['winner_value'])} (device {str(c['winner_origin'])[-4:].upper()})  ·  "
                    f"other {_short(c['loser_value'])} (device {str(c['loser_origin'])[-4:].upper()})",
                )
            )
        return out

    def resolve(self, conflict_id: int, keep: str, actor: str) -> None:
        """Keep the value in force ('winner') or put the other one back ('loser', saved as a new edit)."""
        self.store.resolve_conflict(conflict_id, keep, actor)

    def _name(self, entity: str, record_id: str) -> str:
        if entity == "beam":
            try:
                return str(self.store.beam_record(record_id).get("mark", record_id[-6:]))
            except KeyError:
                return record_id[-6:]
        return record_id[-6:]


def _short(value: str) -> str:
    text = json.dumps(json.loads(value), ensure_ascii=False) if value else "-"
    return text if len(text) <= 60 else text[:57] + "..."
