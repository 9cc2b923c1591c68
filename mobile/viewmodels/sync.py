"""Sync: export / import a bundle file with progress and a summary; review and resolve conflicts."""

from __future__ import annotations

import json
import time
from dataclasses import dataclass
from pathlib import Path

from storage import Store
from storage.bundle import Progress, export_bundle, import_bundle
from storage.hubsync import last_sync as last_hub_sync
from storage.hubsync import pull_quarantine_words, rejection_words
from storage.identity import enrolment
from storage.stamps import local_time, utc_stamp

SKEW_WARN_MS = 2 * 60 * 1000  # sync.md 3.3: warn when the tablet's clock is this far from the hub's


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
        ) + f"  ·  last sync: {_when(self.store.last_sync())}  ·  {len(self.store.conflicts())} conflicts to review"

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

    # -- the office hub ------------------------------------------------------------------------
    def hub_status(self) -> str:
        """'Office hub http://...: in step at 2026-12-02 10:14 UTC' or why not, in words."""
        auth = enrolment(self.store.db)
        if auth is None:
            return "Not enrolled at an office hub: enter its address and the code the office gave you"
        last = last_hub_sync(self.store)
        if last is None:
            return f"Office hub {auth.hub_url}: enrolled, not synced yet"
        when = local_time(utc_stamp(last["at_ms"]))
        words = {"in_step": "in step", "refused": "some changes held back", "unreachable": "could not be reached"}
        return f"Office hub {auth.hub_url}: {words.get(last['outcome'], last['outcome'])} at {when} ({last['detail']})"

    def enroll(self, url: str, code: str) -> str:
        """Enrol this tablet with the office's one-time code; a summary or why not."""
        from mobile.hub_client import HubError, enroll

        if not url.startswith(("http://", "https://")):
            return f"The hub address must start with http:// or https:// (got {url!r})"
        worker = Store(self.store.path)
        try:
            answer = enroll(worker, url, code.strip())
        except HubError as exc:
            return f"Not enrolled: {exc.reason}"
        finally:
            worker.close()
        return f"Enrolled as {answer['name']} for {answer['person']} ({answer['role']})"

    def sync_now(self, progress: Progress | None = None) -> str:
        """Sync with the office hub (in a worker thread: it opens its own Store); a summary in words."""
        from mobile.hub_client import HubError, sync

        worker = Store(self.store.path)
        try:
            result = sync(worker, progress)
        except HubError as exc:
            return f"Not synced, your work is safe on this tablet: {exc.reason}"
        finally:
            worker.close()
        text = f"Sent {result.pushed} changes, received {result.pulled_new}"
        if abs(result.skew_ms) > SKEW_WARN_MS:
            text += f"; this tablet's clock is {abs(result.skew_ms) // 60000} min off the office clock"
        if result.rejected:
            text += f"; the office held back {len(result.rejected)}: see below"
        return text

    def held_back(self) -> list[str]:
        """Changes the office hub refused, each in words: what it was and why."""
        return rejection_words(self.store)

    def set_aside(self) -> list[str]:
        """Changes pulled from the office that this tablet did not apply (signature not verified), in words."""
        return pull_quarantine_words(self.store)

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


@dataclass
class AutoSync:
    """When to sync with the office hub on its own: soon after the network returns, then with backoff.

    The screen calls ``tick(now_s)`` from a timer and runs the sync in a worker thread; nothing here
    blocks the form. After a failure the wait doubles (``base_s`` up to ``max_s``); success or a
    refusal (the hub answered) resets it; ``network_back`` makes the next tick sync at once.
    """

    view: SyncViewModel
    base_s: float = 30.0
    max_s: float = 1800.0
    next_at_s: float = 0.0
    wait_s: float = 30.0

    def due(self, now_s: float) -> bool:
        """True when a sync should start now."""
        return enrolment(self.view.store.db) is not None and now_s >= self.next_at_s

    def network_back(self, now_s: float) -> None:
        """The network has returned: sync at the next tick."""
        self.next_at_s = now_s
        self.wait_s = self.base_s

    def tick(self, now_s: float, progress: Progress | None = None) -> str | None:
        """Sync if due; the summary in words, or None when nothing was due."""
        if not self.due(now_s):
            return None
        text = self.view.sync_now(progress)
        last = last_hub_sync(self.view.store)
        reached = last is not None and last["outcome"] in ("in_step", "refused")
        self.wait_s = self.base_s if reached else min(self.wait_s * 2, self.max_s)
        self.next_at_s = now_s + self.wait_s
        return text

    def waiting(self) -> str:
        """What waits to be sent, in words."""
        n = self.view.store.pending_sync_count("hub")
        return f"{n} changes waiting for the office" if n else "nothing waiting for the office"


def _when(stamp: str | None) -> str:
    """A stored time in local time with its zone, or 'never'."""
    return "never" if stamp is None else local_time(stamp)
