"""Sync: export / import a bundle file with progress and a summary; review and resolve conflicts."""

from __future__ import annotations

import json
import socket
import sqlite3
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from urllib.parse import urlsplit

from storage import Store
from storage.bundle import Progress, export_bundle, import_bundle
from storage.clock import far_ahead_ms
from storage.held import apply_held, held_bundles
from storage.hubsync import HUB_PEER, pull_quarantine_words, rejection_words, rejections
from storage.hubsync import last_sync as last_hub_sync
from storage.identity import enrolment
from storage.stamps import local_time, utc_stamp
from storage.store import OFFICE_PEER, ConflictNotResolved

SKEW_WARN_MS = 2 * 60 * 1000  # sync.md 3.3: warn when the tablet's clock is this far from the hub's


def relay_words(count: int) -> str:
    """Colleagues' changes this tablet holds but cannot pass on to the office yet, in words.

    The hub takes a colleague's change only from a tablet it lists, signed by that tablet (``hubsync._relayable``):
    one from a tablet the office has not enrolled (again, after a restore) waits here, kept, until it has.
    """
    if count == 1:
        return (
            "1 change from another tablet waits on this one: the office takes it only from a tablet it lists, signed "
            "by that tablet, so it is kept here and sent once the office lists it"
        )
    return (
        f"{count} changes from other tablets wait on this one: the office takes them only from tablets it lists, "
        "signed by the tablet that made each, so they are kept here and sent once the office lists them"
    )


def clock_words(skew_ms: int) -> str:
    """The tablet's clock against the office's, with what to do (skew: the office's clock minus the tablet's)."""
    minutes = round(abs(skew_ms) / 60000)
    way = "behind" if skew_ms > 0 else "ahead of"
    return (
        f"this tablet's clock is {minutes} min {way} the office clock: set its date and time "
        "(its changes are stamped by it, and the latest stamp wins a field both sides changed)"
    )


@dataclass
class SyncViewModel:
    """The sync screen. Export and import open their own Store, so they can run in a worker thread."""

    store: Store
    peer: str = OFFICE_PEER
    refused: dict[int, str] = field(default_factory=dict)  # conflict id -> why resolving it was refused

    def status(self) -> str:
        """'12 changes not yet sent to the office · last sync ...' .

        A change written into a file is not yet with the office: until a peer acknowledges it (the hub's
        answer, or a bundle coming back holding it) it is counted apart, and the next file carries it again.
        """
        unwritten = self.store.unwritten_count(self.peer)
        pending = self.store.pending_sync_count(self.peer)
        if unwritten:
            words = f"{unwritten} changes not yet sent to the {self.peer}"
        elif pending:
            words = (
                f"{pending} changes written to a file, not yet confirmed received (the next file carries them again)"
            )
        else:
            words = "Everything sent and confirmed received"
        conflicts = len(self.store.conflicts())
        return words + f"  ·  last sync: {_when(self.store.last_sync())}  ·  {conflicts} conflicts to review"

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
            text = (
                f"Merged {report.ops_new} new changes of {report.ops_total}; {report.blobs_new} files; "
                f"{report.conflicts_new} conflicts to review"
            )
            return text + (f". Warning: {report.warning}" if report.warning else "")
        if report.outcome == "held":
            return (
                f"Held, not applied: {report.reason}. A copy is kept on this tablet: after updating the app, "
                "tap Apply held bundles here (no need to import the file again)."
            )
        return f"Refused, nothing changed: {report.reason}"

    def held_bundles_text(self) -> str:
        """Bundles held because a newer app wrote them: how many this app now reads, how many wait ('' if none)."""
        held = held_bundles(self.store)
        now = sum(1 for h in held if h.readable)
        later = len(held) - now
        parts = []
        if now:
            parts.append(f"{_bundles(now)} held until this app was updated can be applied now: tap Apply held bundles")
        if later:
            parts.append(f"{_bundles(later)} held until this app is updated (written by a newer bracewalk)")
        return "; ".join(parts)

    def has_readable_held(self) -> bool:
        """True when a held bundle can be applied now (show the button)."""
        return any(h.readable for h in held_bundles(self.store))

    def apply_held(self, progress: Progress | None = None) -> str:
        """Apply the held bundles this app now reads (own Store: a worker thread); a summary."""
        worker = Store(self.store.path)
        try:
            done = apply_held(worker, progress)
        finally:
            worker.close()
        applied = [r for _, r in done if r.outcome == "applied"]
        text = f"Applied {_bundles(len(applied))}: {sum(r.ops_new for r in applied)} new changes"
        kept = [f"{h.sha256[:8]}: {r.reason}" for h, r in done if r.outcome != "applied"]
        return text + (f"; still held: {'; '.join(kept)}" if kept else "")

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

    def enrolled_note(self) -> str:
        """Once enrolled: where and as which device, and when to enrol again ('' when not enrolled)."""
        auth = enrolment(self.store.db)
        if auth is None:
            return ""
        return (
            f"This tablet is enrolled at {auth.hub_url} as device {auth.device_id}. Enrol again only with a new "
            "code from the office: after the office revoked this tablet, or to move it to another hub."
        )

    def hub_url(self) -> str:
        """The address of the office hub this tablet is enrolled at ('' when not enrolled)."""
        auth = enrolment(self.store.db)
        return auth.hub_url if auth is not None else ""

    def waiting(self) -> str:
        """What waits to be sent to the office hub, in words (changes the hub refused are counted apart)."""
        held = sum(1 for r in rejections(self.store) if r["origin"] == self.store.device_id)
        n = max(0, self.store.pending_sync_count(HUB_PEER) - held)
        text = f"{n} change{'s' if n > 1 else ''} waiting for the office" if n else "nothing waiting for the office"
        return text + (f"; {held} held back by the office (listed with the reason)" if held else "")

    def clock_warning(self) -> str:
        """A warning when changes held here are stamped far ahead of this tablet's clock ('' if none).

        Such stamps are accepted (sync.md 3.3), and this tablet's own later edits still take effect, but
        a clock that far off on some device is worth a look: this tablet's clock, or the other device's.
        """
        row = self.store.db.execute("SELECT max(hlc) FROM op WHERE origin != ?", [self.store.device_id]).fetchone()
        if row is None or row[0] is None:
            return ""
        wall = self.store.wall_ms()
        if far_ahead_ms(int(row[0]), wall) <= 0:
            return ""
        ahead_min = ((int(row[0]) >> 16) - wall) / 60_000
        span = f"{ahead_min / 1440:,.1f} days" if ahead_min >= 1440 else f"{ahead_min:,.0f} min"
        return (
            f"Clock: changes from another device are stamped up to {span} ahead of this tablet's clock. "
            "They were accepted and your next edits still take effect; check the date and time here and on "
            "the other devices."
        )

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
            text += f"; {clock_words(result.skew_ms)}"
        if result.rejected:
            text += f"; the office held back {len(result.rejected)}: see below"
        if result.unsigned_relays:
            text += f"; {relay_words(result.unsigned_relays)}"
        if result.version_words:
            text += f"; {result.version_words}"
        return text

    def held_back(self) -> list[str]:
        """Changes the office hub refused, each in words: what it was and why."""
        return rejection_words(self.store)

    def set_aside(self) -> list[str]:
        """What this tablet holds but does not apply, in words.

        Changes pulled from the office whose signature or record did not verify, and the firm's table row
        records that are not whole, valid records (the published row is used until they are fixed).
        """
        return pull_quarantine_words(self.store) + [a.words for a in self.store.table_records_set_aside()]

    def conflicts(self) -> list[tuple[int, str]]:
        """[(conflict id, 'beam RB-2 · spans_mm: kept [7200] (device A) · other [7000] (device B)')]."""
        out = []
        for c in self.store.conflicts():
            out.append(
                (
                    int(c["id"]),
                    f"{c['entity']} {self._name(c['entity'], c['record_id'])} · {c['field']}: "
                    f"kept {_short(c['winner_value'])} (device {str(c['winner_origin'])[-4:].upper()})  ·  "
                    f"other {_short(c['loser_value'])} (device {str(c['loser_origin'])[-4:].upper()})"
                    + (f"  ·  NOT DONE: {self.refused[c['id']]}" if c["id"] in self.refused else ""),
                )
            )
        return out

    def resolve(self, conflict_id: int, keep: str, actor: str) -> str:
        """Keep the value in force ('winner') or put the other one back ('loser', saved as a new edit).

        Returns '' when done, or why it was refused (nothing saved; ``Store.resolve_conflict``), which the
        conflict's line then says too.
        """
        try:
            self.store.resolve_conflict(conflict_id, keep, actor)
        except ConflictNotResolved as exc:
            self.refused[conflict_id] = str(exc)  # shown on the conflict's line (``conflicts``)
            return str(exc)
        self.refused.pop(conflict_id, None)
        return ""

    def _name(self, entity: str, record_id: str) -> str:
        if entity == "table_row":
            return record_id  # 'glulam_grades:D.Fir-L/24f-E': the table and the row
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
    settle_s: float = 3.0
    failing: bool = False

    def __post_init__(self) -> None:
        """The first wait after a failure is ``base_s`` (then it doubles)."""
        self.wait_s = self.base_s

    def due(self, now_s: float) -> bool:
        """True when a sync should start now."""
        return enrolment(self.view.store.db) is not None and now_s >= self.next_at_s

    def network_back(self, now_s: float) -> None:
        """The network has returned: sync at the next tick."""
        self.next_at_s = now_s
        self.wait_s = self.base_s
        self.failing = False

    def tick(self, now_s: float, progress: Progress | None = None) -> str | None:
        """Sync if due; the summary in words, or None when nothing was due (single-threaded use)."""
        if not self.due(now_s):
            return None
        text = self.view.sync_now(progress)
        self.record(now_s, hub_was_reached(self.view.store))
        return text

    def record(self, now_s: float, reached: bool) -> None:
        """After a sync attempt: back to ``base_s`` when the hub answered, else double the wait."""
        self.wait_s = self.base_s if reached else min(self.wait_s * 2, self.max_s)
        self.next_at_s = now_s + self.wait_s
        self.failing = not reached

    def changed(self, now_s: float) -> None:
        """Work was logged: sync it ``settle_s`` later (sooner than the periodic pull), unless backing off."""
        if not self.failing:
            self.next_at_s = min(self.next_at_s, now_s + self.settle_s)

    def waiting(self) -> str:
        """What waits to be sent, in words."""
        return self.view.waiting()


def _when(stamp: str | None) -> str:
    """A stored time in local time with its zone, or 'never'."""
    return "never" if stamp is None else local_time(stamp)


def hub_was_reached(store: Store) -> bool:
    """True when the last sync attempt got an answer from the hub (in step, or some changes refused)."""
    last = last_hub_sync(store)
    return last is not None and last["outcome"] in ("in_step", "refused")


def reachable(url: str, timeout_s: float = 2.0) -> bool:
    """True when a TCP connection to the hub's host and port opens (a cheap probe: has the network returned?)."""
    parts = urlsplit(url)
    port = parts.port or (443 if parts.scheme == "https" else 80)
    try:
        with socket.create_connection((parts.hostname or "", port), timeout=timeout_s):
            return True
    except OSError:
        return False


@dataclass
class BackgroundSync:
    """Automatic sync in a worker thread, driven by ``poll(now_s)`` from a UI timer; never blocks the caller.

    ``poll`` is cheap (a count of unsent changes): it notices logged work (sync ``settle_s`` later), probes the
    hub while the network is down (every ``probe_s``; when it answers, sync at once) and starts a sync when
    ``AutoSync`` says it is due. The worker opens its own ``Store`` (SQLite connections stay in their thread).
    ``busy``, ``progress`` and ``summary`` are read by the screen.
    """

    auto: AutoSync
    probe_s: float = 10.0
    busy: bool = False
    progress: tuple[float, str] = (0.0, "")
    summary: str = ""
    finished_at_s: float | None = None
    _thread: threading.Thread | None = None
    _outcome: tuple[str, bool] | None = None
    _probe_ok: bool | None = None
    _next_probe_s: float = 0.0
    _sent_mark: int = -1
    _lock: threading.Lock = field(default_factory=threading.Lock)
    _stopped: bool = False

    def poll(self, now_s: float) -> bool:
        """Collect a finished job and start the next one when due; True when a sync just finished."""
        if self._thread is not None and self._thread.is_alive():
            return False
        finished = self._collect(now_s)
        if self._stopped or enrolment(self.auto.view.store.db) is None:
            return finished
        pending = self.auto.view.store.pending_sync_count(HUB_PEER)
        if pending > 0 and pending != self._sent_mark:
            self.auto.changed(now_s)
            self._sent_mark = pending
        if self.auto.due(now_s):
            self.busy, self.progress = True, (0.0, "starting")
            self._start(self._sync_job, str(self.auto.view.store.path))
        elif self.auto.failing and now_s >= self._next_probe_s:
            self._next_probe_s = now_s + self.probe_s
            self._start(self._probe_job, self.auto.view.hub_url())
        return finished

    def sync_soon(self, now_s: float) -> None:
        """Sync at the next poll (the reviewer tapped "Sync now", or the network returned)."""
        self.auto.network_back(now_s)

    def stop(self, timeout_s: float = 5.0) -> None:
        """Start nothing more; wait up to ``timeout_s`` for a sync under way (its work is kept either way)."""
        self._stopped = True
        if self._thread is not None:
            self._thread.join(timeout=timeout_s)

    def _collect(self, now_s: float) -> bool:
        with self._lock:
            outcome, probe_ok = self._outcome, self._probe_ok
            self._outcome = self._probe_ok = None
        self.busy = False
        if probe_ok:
            self.auto.network_back(now_s)
        if outcome is None:
            return False
        text, reached = outcome
        self.auto.record(now_s, reached)
        self.summary, self.finished_at_s = text, now_s
        self._sent_mark = -1
        return True

    def _start(self, job: Callable[[str], None], arg: str) -> None:
        self._thread = threading.Thread(target=job, args=(arg,), name="bracewalk-sync", daemon=False)
        self._thread.start()

    def _tell(self, fraction: float, what: str) -> None:
        self.progress = (fraction, what)

    def _sync_job(self, db_path: str) -> None:
        try:
            worker = Store(db_path)
            try:
                text = SyncViewModel(worker).sync_now(self._tell)
                reached = hub_was_reached(worker)
            finally:
                worker.close()
        except (OSError, ValueError, sqlite3.Error) as exc:  # shown on the Sync screen; the work stays here
            text, reached = f"Not synced, your work is safe on this tablet: {exc}", False
        with self._lock:
            self._outcome = (text, reached)

    def _probe_job(self, url: str) -> None:
        ok = bool(url) and reachable(url)
        with self._lock:
            self._probe_ok = ok


def _bundles(n: int) -> str:
    return f"{n} bundle{'s' if n != 1 else ''}"
