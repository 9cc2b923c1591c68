"""Hub benchmark: 10 simulated tablets push 1,000 ops each, concurrently, to one hub over HTTP.

Reports ops/s accepted and the p95 push latency, against a raw batched INSERT of the same rows into
the same database in the same run (aim: >= 0.2x the raw insert). SQLite always; PostgreSQL with
``--pg URL``. Run: ``python -m bench.hub [--quick] [--pg postgresql://...]``. Not a test.

``--scale`` (issue 15) adds: 50 tablets x 500 ops on a throwaway PostgreSQL server (durable:
fsync and synchronous_commit on) with 1 and then 2 hub worker processes, each tablet pushing and
then pulling every other tablet's ops (ops/s over the push phase, p95 of one push); and a failover
drill on a synchronous primary+standby (SIGKILL the primary, promote the standby 1 s later): the
time from the kill to the first push the promoted standby accepts.
"""

from __future__ import annotations

import argparse
import json
import statistics
import tempfile
import threading
import time
from pathlib import Path
from typing import Any

from bench.common import Row, fmt_rate, print_table
from mobile.hub_client import enroll, request
from office.background import BackgroundHub
from office.hubstore import HubStore
from storage import Store
from storage.clock import uuid7
from storage.db import transaction
from storage.hubsync import outgoing, record_push_answer
from storage.identity import enrolment
from storage.oplog import OP_KEYS

BENCH_KEY = "bench-only-firm-key"
PUSH_OPS = 100  # ops per push: 10 pushes per tablet, so the p95 is over 100 pushes


def _tablet(path: Path, url: str, hub: HubStore, n_ops: int, i: int) -> Store:
    store = Store(path, firm_key=BENCH_KEY)
    enroll(store, url, hub.new_code(f"Bench {i}", "Bench", "reviewer"))
    with transaction(store.db):
        site = uuid7()
        store._save_in_tx("site", site, {"name": f"Bench site {i}", "site_id": site}, "set", None)
        beam = uuid7()
        for n in range(n_ops - 1):
            store._save_in_tx("beam", beam, {"site_id": site, "notes": f"edit {n}", "b_mm": 130 + n % 7}, "set", None)
    return store


def _push_all(store: Store, url: str, latencies: list[float], lock: threading.Lock) -> None:
    auth = enrolment(store.db)
    assert auth is not None
    while True:
        out = outgoing(store, auth, PUSH_OPS).ops
        if not out:
            return
        body = json.dumps(
            {
                "bundle_id": uuid7(),
                "ops": [{"op": dict(op.row(), payload=op.payload, base=op.base), "sig": sig} for op, sig in out],
            }
        ).encode()
        t0 = time.perf_counter()
        answer = json.loads(request(url, "POST", "/v1/push", body, auth))
        dt = time.perf_counter() - t0
        with lock:
            latencies.append(dt)
        if answer["rejected"]:
            msg = f"hub bench: {len(answer['rejected'])} ops refused: {answer['rejected'][0]}"
            raise RuntimeError(msg)
        record_push_answer(store, answer, out, int(time.time() * 1000))


def _raw_insert(hub: HubStore, rows: list[tuple[Any, ...]]) -> float:
    cols = ", ".join(OP_KEYS)
    if hub.backend == "sqlite":
        conn = hub.db.conn
        conn.execute(f"CREATE TABLE raw_op AS SELECT {cols} FROM op WHERE 0")
        t0 = time.perf_counter()
        conn.execute("BEGIN")
        conn.executemany(f"INSERT INTO raw_op VALUES ({', '.join('?' * len(OP_KEYS))})", rows)
        conn.execute("COMMIT")
        return time.perf_counter() - t0
    conn = hub.db.conn
    conn.execute(f"CREATE TABLE raw_op AS SELECT {cols} FROM op WHERE false")
    t0 = time.perf_counter()
    with conn.transaction(), conn.cursor() as cur:
        cur.executemany(f"INSERT INTO raw_op VALUES ({', '.join(['%s'] * len(OP_KEYS))})", rows)
    return time.perf_counter() - t0


def run_one(db: str, folder: Path, tablets: int, ops_each: int) -> list[Row]:
    """One backend: build the tablets, push concurrently, then the raw insert of the same rows."""
    folder.mkdir(parents=True, exist_ok=True)
    hub = HubStore(db, blob_dir=folder / "hub-blobs")
    running = BackgroundHub(hub).start()
    try:
        stores = [_tablet(folder / f"t{i}.db", running.url, hub, ops_each, i) for i in range(tablets)]
        latencies: list[float] = []
        lock = threading.Lock()
        threads = [threading.Thread(target=_push_all, args=(s, running.url, latencies, lock)) for s in stores]
        t0 = time.perf_counter()
        for t in threads:
            t.start()
        for t in threads:
            t.join()
        wall = time.perf_counter() - t0
        total = tablets * ops_each
        held = int(hub.db.execute("SELECT count(*) FROM op").fetchone()[0])
        if held != total:
            msg = f"hub bench: the hub holds {held} ops of {total}"
            raise RuntimeError(msg)
        rows = []
        for s in stores:
            rows += s.db.execute(f"SELECT {', '.join(OP_KEYS)} FROM op").fetchall()
            s.close()
        raw = _raw_insert(hub, rows)
    finally:
        running.stop()
        hub.close()
    rate, raw_rate = total / wall, total / raw
    p95 = statistics.quantiles(latencies, n=20)[-1] if len(latencies) >= 20 else max(latencies)
    ratio = rate / raw_rate
    return [
        Row(
            f"hub push, {hub.backend}, {tablets}x{ops_each} ops",
            fmt_rate(rate, "ops"),
            f"raw INSERT {fmt_rate(raw_rate, 'ops')}",
            f"{ratio:.3f}x",
            ">= 0.2x raw",
            ratio >= 0.2,
        ),
        Row(f"hub push p95 latency, {hub.backend}", f"{p95 * 1000:.0f} ms", "", "", f"{PUSH_OPS} ops per push", None),
    ]


def run(quick: bool = False, pg_url: str | None = None) -> list[Row]:
    """Every backend available: SQLite, and PostgreSQL when a URL is given."""
    tablets, ops_each = (3, 200) if quick else (10, 1000)
    rows = []
    with tempfile.TemporaryDirectory(prefix="bracewalk-bench-hub-") as tmp:
        rows += run_one(str(Path(tmp) / "hub.db"), Path(tmp) / "sqlite", tablets, ops_each)
        if pg_url:
            rows += run_one(pg_url, Path(tmp) / "pg", tablets, ops_each)
    return rows


def run_scale(quick: bool = False) -> list[Row]:
    """Issue 15: 1 and 2 hub workers on one PostgreSQL with many tablets; failover time."""
    from office.pgha import PgServer
    from tests.office.fleet import run_load

    tablets, ops_each = (10, 100) if quick else (50, 500)
    rows = []
    server = PgServer().init().start()
    try:
        for workers in (1, 2):
            with tempfile.TemporaryDirectory(prefix="bracewalk-bench-scale-") as tmp:
                r = run_load([server.create_database(f"scale{workers}")], Path(tmp), tablets, ops_each, workers)
            ok = r.ops_on_hub == r.hub_log_rows == tablets * ops_each and r.tablets_complete == tablets
            print(f"{workers} worker(s): {r}"[:300], flush=True)
            rows.append(
                Row(
                    f"hub, PostgreSQL, {workers} worker(s), {tablets} tablets x {ops_each} ops",
                    fmt_rate(r.ops_per_s, "ops"),
                    f"p95 push {r.p95_s * 1000:.0f} ms; all pulled in {r.total_wall_s:.1f} s",
                    "",
                    "zero lost or duplicated",
                    ok,
                )
            )
    finally:
        server.remove()
    rows.append(_failover_row())
    return rows


def _failover_row() -> Row:
    """Kill the primary under pushes, promote the standby 1 s later, time to the first accepted push."""
    from office.background import HubProcess
    from office.pgha import SyncPair
    from tests.office.fleet import SimTablet

    pair = SyncPair().start()
    procs: list[HubProcess] = []
    stop = threading.Event()
    acked: list[float] = []
    try:
        urls = pair.create_database("hub")
        admin = HubStore(urls)
        for _ in range(2):  # each one stopped below, even if the second fails to start
            procs.append(HubProcess(urls))
            procs[-1].start()
        with tempfile.TemporaryDirectory(prefix="bracewalk-bench-failover-") as tmp:
            sims = [SimTablet(Path(tmp), procs[i % 2].url, admin, i) for i in range(4)]

            def loop(t: SimTablet) -> None:
                while not stop.is_set():
                    t.edit(5)
                    t.sync()
                    acked.append(time.monotonic())

            threads = [threading.Thread(target=loop, args=(t,)) for t in sims]
            for th in threads:
                th.start()
            time.sleep(2.0)
            pair.primary.kill()
            killed = time.monotonic()
            time.sleep(1.0)
            pair.standby.promote()
            promoted = time.monotonic()
            deadline = killed + 120
            while not [a for a in acked if a > promoted] and time.monotonic() < deadline:
                time.sleep(0.01)
            stop.set()
            for th in threads:
                th.join(timeout=120)
            first = min(a for a in acked if a > promoted)
            for t in sims:
                t.store.close()
        admin.close()
    finally:
        stop.set()
        for p in procs:
            p.stop()
        pair.remove()
    return Row(
        "failover: kill primary -> first push accepted on the promoted standby",
        f"{first - killed:.2f} s",
        f"promote issued 1.0 s after the kill, done {promoted - killed:.2f} s after it",
        "",
        "",
        None,
    )


def main(argv: list[str] | None = None) -> int:
    """Parse arguments, run, print the table."""
    ap = argparse.ArgumentParser(prog="python -m bench.hub", description=__doc__)
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--pg", help="an empty PostgreSQL database URL to run the same case on")
    ap.add_argument("--scale", action="store_true", help="only the issue-15 rows: 1 and 2 workers, failover")
    args = ap.parse_args(argv)
    print_table(run_scale(args.quick) if args.scale else run(args.quick, args.pg))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
