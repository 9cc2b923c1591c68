"""Failover: a synchronous primary+standby, two hub worker processes, tablets pushing and pulling.

The primary is SIGKILLed in the middle of pushes, the standby promoted, the tablets retry. Nothing
any tablet was told was accepted may be missing from the new primary; nothing is applied twice;
every tablet and the hub converge to one digest; the register still opens.
"""

from __future__ import annotations

import threading
import time

import httpx
import psycopg
import pytest

from office.background import HubProcess
from office.hubstore import HubStore
from office.pgdb import DatabaseUnavailable
from office.pgha import SyncPair, pg_bindir
from office.registry import add_user
from tests.office.fleet import SimTablet, watch_acknowledgements

pytestmark = pytest.mark.skipif(pg_bindir() is None, reason="PostgreSQL is not installed")  # about 20 s

TABLETS = 4
ROUNDS = 15
EDITS = 5


def test_kill_the_primary_mid_push_promote_the_standby_nothing_acknowledged_is_lost(tmp_path, monkeypatch):
    acked = watch_acknowledgements(monkeypatch)
    pair = SyncPair(durable=False).start()
    workers: list[HubProcess] = []
    try:
        urls = pair.create_database("hub")
        admin = HubStore(urls)
        for _ in range(2):  # each one stopped below, even if the second fails to start
            workers.append(HubProcess(urls))
            workers[-1].start()
        tablets = [SimTablet(tmp_path, workers[i % 2].url, admin, i) for i in range(TABLETS)]
        errors: list[BaseException] = []

        def work(t: SimTablet) -> None:
            try:
                for _ in range(ROUNDS):
                    t.edit(EDITS)
                    t.sync()
                    time.sleep(0.05)
            except BaseException as exc:  # reported by the main thread
                errors.append(exc)

        threads = [threading.Thread(target=work, args=(t,)) for t in tablets]
        for th in threads:
            th.start()
        deadline = time.monotonic() + 60
        while len(acked.ops()) < TABLETS * (2 + 3 * EDITS) and time.monotonic() < deadline:
            time.sleep(0.02)
        acked_before_kill = acked.ops()
        pair.primary.kill()  # mid-push: the tablets keep pushing
        killed_at = time.monotonic()
        time.sleep(1.0)
        pair.standby.promote()
        for th in threads:
            th.join(timeout=150)
        assert not errors, errors
        first_after = acked.first_after(killed_at)
        for t in tablets + tablets:  # two rounds: everyone has pushed, then everyone pulls the rest
            t.sync()

        with psycopg.connect(pair.standby.url("hub"), autocommit=True) as conn:
            assert conn.execute("SELECT pg_is_in_recovery()").fetchone() == (False,)
            on_new_primary = set(conn.execute("SELECT origin, seq FROM op").fetchall())
            logged = conn.execute("SELECT origin, seq FROM hub_log").fetchall()
        assert acked_before_kill
        assert acked_before_kill <= acked.ops()
        assert acked.ops() <= on_new_primary  # every acknowledged op survived the primary
        assert len(logged) == len(set(logged)) == len(on_new_primary)  # none applied twice
        assert set().union(*(t.own_ops() for t in tablets)) == on_new_primary
        assert len(on_new_primary) == TABLETS * (2 + ROUNDS * EDITS)
        assert all(t.ops() == on_new_primary for t in tablets)
        with pytest.raises(DatabaseUnavailable):  # its first use after the failover: its server is gone
            admin.digest()
        assert len({t.store.digest() for t in tablets} | {admin.digest()}) == 1  # reconnected to the new primary
        assert sum(t.failed_syncs for t in tablets) > 0  # the kill was felt: syncs failed and were retried

        add_user(admin, "office", "correct horse battery")
        with httpx.Client(base_url=workers[1].url) as client:
            r = client.post("/login", data={"name": "office", "password": "correct horse battery"})
            assert r.status_code == 303
            client.cookies.set("bw_session", r.cookies["bw_session"])
            assert client.get("/").status_code == 200
            assert "Site 0" in client.get("/").text
        print(f"failover: first accepted push {first_after - killed_at:.2f} s after the kill")
        admin.close()
    finally:
        for w in workers:
            w.stop()
        pair.remove()
