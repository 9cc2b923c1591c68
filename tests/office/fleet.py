"""Simulated tablets for the multi-worker, failover and load tests: edit, sync, retry, count what was acknowledged."""

from __future__ import annotations

import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

from mobile import hub_client
from mobile.hub_client import HubError, enroll
from office.hubstore import HubStore
from storage import Store
from storage.db import transaction
from storage.hubsync import record_push_answer
from tests.core.beams import glulam

RETRY_S = 120.0  # bounded: a tablet gives up after this long without a successful sync
LOAD_TIMEOUT_S = 900.0  # bounded, generous: one request, and one sync round of every tablet, in the load run


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


@dataclass
class LoadResult:
    """What a load run measured and counted."""

    tablets: int
    ops_each: int
    workers: int
    push_wall_s: float  # from the first push sent to the last push acknowledged
    push_latencies_s: list[float]
    total_wall_s: float  # push, pull everything, second round
    ops_on_hub: int
    hub_log_rows: int
    tablets_complete: int  # tablets holding every op of every tablet

    @property
    def ops_per_s(self) -> float:
        """Ops acknowledged per second over the push phase."""
        return self.tablets * self.ops_each / self.push_wall_s

    @property
    def p95_s(self) -> float:
        """95th percentile push latency (one push request)."""
        lat = sorted(self.push_latencies_s)
        return lat[min(len(lat) - 1, int(0.95 * len(lat)))]


class _PushTimer:
    """``hub_client.request`` wrapped: the latency of every push and when the last one was acknowledged."""

    def __init__(self) -> None:
        self.latencies: list[float] = []
        self.last_ack = 0.0
        self.lock = threading.Lock()
        self.real = hub_client.request

    def __call__(self, url: str, method: str, path: str, *args: object, **kw: object) -> bytes:
        t0 = time.perf_counter()
        out: bytes = self.real(url, method, path, *args, **kw)  # type: ignore[arg-type]
        if path == "/v1/push":
            with self.lock:
                self.latencies.append(time.perf_counter() - t0)
                self.last_ack = time.perf_counter()
        return out


@contextmanager
def _patient_client() -> Iterator[None]:
    """The tablets' request timeout raised to LOAD_TIMEOUT_S while the block runs (put back after).

    A push waits its turn at the hub's ingest lock: with many tablets at once that can pass the
    tablet's usual timeout, and a retry would only queue the same ops again. Enrolment too: on a
    loaded 2-core machine a request to a just-started worker may wait well past 20 s.
    """
    real_timeout = hub_client.TIMEOUT_S
    hub_client.TIMEOUT_S = LOAD_TIMEOUT_S
    try:
        yield
    finally:
        hub_client.TIMEOUT_S = real_timeout


@contextmanager
def _timed_pushes() -> Iterator[_PushTimer]:
    """Time every push while the block runs; the client's request is put back after."""
    timer = _PushTimer()
    hub_client.request = timer
    try:
        yield timer
    finally:
        hub_client.request = timer.real


def _sync_all(sims: list[SimTablet], rounds: int = 2) -> None:
    """Every tablet syncs at once (push, then pull what is there), ``rounds`` times; the first error is raised.

    A tablet still syncing after LOAD_TIMEOUT_S is an error too: counting while it runs would report
    ops as lost that are merely late.
    """
    errors: list[BaseException] = []

    def both(t: SimTablet) -> None:
        try:
            t.sync()
        except BaseException as exc:  # reported below
            errors.append(exc)

    for _round in range(rounds):
        threads = [threading.Thread(target=both, args=(t,), name=f"tablet {t.i}") for t in sims]
        for th in threads:
            th.start()
        deadline = time.monotonic() + LOAD_TIMEOUT_S
        for th in threads:
            th.join(timeout=max(0.0, deadline - time.monotonic()))
        if errors:
            raise errors[0]
        late = [th.name for th in threads if th.is_alive()]
        if late:
            msg = f"round {_round + 1}: {', '.join(late)} still syncing after {LOAD_TIMEOUT_S} s"
            raise RuntimeError(msg)


def _tally(admin: HubStore, sims: list[SimTablet]) -> tuple[int, int, int]:
    """(tablets holding every op of every tablet, ops on the hub, hub log rows); closes the tablets."""
    every = set().union(*(t.own_ops() for t in sims))
    complete = sum(1 for t in sims if t.ops() == every)
    with admin.lock:
        ops_on_hub = int(admin.db.execute("SELECT count(*) FROM op").fetchone()[0])
        log_rows = int(admin.db.execute("SELECT count(*) FROM hub_log").fetchone()[0])
    for t in sims:
        t.store.close()
    return complete, ops_on_hub, log_rows


def run_load(dbs: list[str], folder: Path, tablets: int, ops_each: int, workers: int = 2) -> LoadResult:
    """``tablets`` simulated tablets (threads) on ``workers`` hub processes: each pushes ``ops_each`` ops, pulls all.

    Every tablet pushes at once (then pulls what is there), then syncs again to pull the rest.
    """
    from office.background import HubProcess

    admin = HubStore(dbs)
    procs: list[HubProcess] = []
    try:
        for _ in range(workers):  # each one stopped below, even if a later one fails to start
            procs.append(HubProcess(dbs))
            procs[-1].start()
        with _patient_client():
            sims = [SimTablet(folder, procs[i % workers].url, admin, i) for i in range(tablets)]
            for t in sims:
                t.edit(ops_each - 2)  # with the site and the beam: ops_each ops per tablet
            with _timed_pushes() as timer:
                t0 = time.perf_counter()
                _sync_all(sims)
                total = time.perf_counter() - t0
        complete, ops_on_hub, log_rows = _tally(admin, sims)
        return LoadResult(
            tablets, ops_each, workers, timer.last_ack - t0, timer.latencies, total, ops_on_hub, log_rows, complete
        )
    finally:
        for p in procs:
            p.stop()
        admin.close()
