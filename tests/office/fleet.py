"""Simulated tablets for the multi-worker, failover and load tests: edit, sync, retry, count what was acknowledged."""

from __future__ import annotations

import threading
import time
from pathlib import Path

from mobile import hub_client
from mobile.hub_client import HubError, enroll
from office.hubstore import HubStore
from storage import Store
from storage.db import transaction
from storage.hubsync import record_push_answer
from tests.core.beams import glulam

RETRY_S = 120.0  # bounded: a tablet gives up after this long without a successful sync


class Acknowledged:
    """Every (origin, seq) a hub told a tablet it accepted, collected from the push answers."""

    def __init__(self) -> None:
        self.lock = threading.Lock()
        self.highest: dict[str, int] = {}
        self.times: list[float] = []

    def record(self, store: Store, answer: dict, pushed: list, now_ms: int) -> None:
        with self.lock:
            self.times.append(time.monotonic())
            for origin, seq in answer["accepted"].items():
                self.highest[origin] = max(self.highest.get(origin, 0), int(seq))
        record_push_answer(store, answer, pushed, now_ms)

    def first_after(self, t0: float) -> float:
        """When the first push after ``t0`` was acknowledged (time.monotonic)."""
        with self.lock:
            return min(t for t in self.times if t > t0)

    def ops(self) -> set[tuple[str, int]]:
        """Each acknowledged op: a push acknowledges every op of the origin up to its ``accepted`` seq."""
        with self.lock:
            return {(o, s) for o, top in self.highest.items() for s in range(1, top + 1)}


def watch_acknowledgements(monkeypatch) -> Acknowledged:
    """Collect every push answer the tablets receive (the client calls record_push_answer with it)."""
    acked = Acknowledged()
    monkeypatch.setattr(hub_client, "record_push_answer", acked.record)
    return acked


class SimTablet:
    """One tablet enrolled at one hub worker: a site and a beam, edited ``n`` times between syncs."""

    def __init__(self, folder: Path, url: str, hub: HubStore, i: int):
        self.store = Store(folder / f"tablet{i}.db")
        enroll(self.store, url, hub.new_code(f"Tablet {i}", f"Reviewer {i}", "reviewer"))
        self.site = self.store.create_site(name=f"Site {i}")
        self.beam = self.store.save_beam(self.site.id, glulam(mark=f"B{i}"))
        self.i = i
        self.failed_syncs = 0

    def edit(self, n: int) -> None:
        """``n`` edits of the tablet's beam, in one transaction (one op each)."""
        with transaction(self.store.db):
            for k in range(n):
                self.store._save_in_tx("beam", self.beam, {"notes": f"t{self.i} edit {k}"}, "set", None)

    def sync(self, give_up_s: float = RETRY_S) -> None:
        """Sync, retrying while the hub is unreachable or answers 5xx (as the app's automatic sync does)."""
        deadline = time.monotonic() + give_up_s
        while True:
            try:
                hub_client.sync(self.store)
                return
            except HubError as exc:
                if exc.status is not None and exc.status < 500:
                    raise
                self.failed_syncs += 1
                if time.monotonic() > deadline:
                    raise
                time.sleep(0.2)

    def ops(self) -> set[tuple[str, int]]:
        """Every (origin, seq) the tablet holds."""
        return {(o, s) for o, s in self.store.db.execute("SELECT origin, seq FROM op").fetchall()}

    def own_ops(self) -> set[tuple[str, int]]:
        """The ops this tablet made itself."""
        return {(o, s) for o, s in self.ops() if o == self.store.device_id}
