"""Several hub workers on one PostgreSQL: hole-free cursors under concurrent pushes, shared blobs.

sync.md 4: hub_seq must be handed out in commit order, or a puller at cursor c can skip an op that
commits later with a lower hub_seq. Here several workers (each its own HubStore and connection, as
separate ``bracewalk hub serve`` processes would be) take pushes from many tablets at once while a
puller follows the log page by page; it must end up having seen every hub_seq, each once. (With the
advisory lock taken out of office/pgdb.py this test fails: the puller skips hub_seq 2.)
"""

from __future__ import annotations

import hashlib
import threading

from office.hubstore import HubStore
from tests.office.conftest import RunningHub
from tests.office.fleet import SimTablet


def _log(hub: HubStore) -> list[int]:
    return [r[0] for r in hub.db.execute("SELECT hub_seq FROM hub_log ORDER BY hub_seq").fetchall()]


def test_pulls_during_concurrent_pushes_to_two_workers_skip_nothing(pg_cluster, tmp_path):
    url = pg_cluster.new_database()
    workers = [RunningHub(HubStore(url)).start() for _ in range(2)]
    reader = HubStore(url)
    try:
        tablets = [SimTablet(tmp_path, workers[i % 2].url, workers[i % 2].hub, i) for i in range(6)]
        pushing = threading.Event()
        pushing.set()
        seen: list[int] = []

        def follow() -> None:
            cursor = 0
            while True:
                last_round = not pushing.is_set()
                page = reader.pull(cursor, 50)
                seen.extend(o["hub_seq"] for o in page["ops"])
                cursor = page["next_cursor"]
                if last_round and not page["more"]:
                    return

        def work(t: SimTablet) -> None:
            for _ in range(8):
                t.edit(5)
                t.sync()

        puller = threading.Thread(target=follow)
        puller.start()
        threads = [threading.Thread(target=work, args=(t,)) for t in tablets]
        for th in threads:
            th.start()
        for th in threads:
            th.join(timeout=300)
        pushing.clear()
        puller.join(timeout=60)
        logged = _log(reader)
        assert len(logged) == 6 * (2 + 8 * 5)  # a site and a beam, then 8 x 5 edits per tablet
        assert seen == logged  # every hub_seq seen, once each, in order: no hole was skipped
        for t in tablets:
            t.sync()
        assert len({t.store.digest() for t in tablets} | {reader.digest()}) == 1
    finally:
        for w in workers:
            w.stop()
            w.hub.close()
        reader.close()


def test_a_blob_sent_to_one_worker_is_served_by_another(pg_cluster):
    url = pg_cluster.new_database()
    a, b = HubStore(url), HubStore(url)
    try:
        device = a.enroll(a.new_code("T", "P", "reviewer"), "dev-1", _public_key()).device_id
        content = b"\xff\xd8 photo bytes"
        sha = hashlib.sha256(content).hexdigest()
        assert a.put_blob(sha, content, device) is True
        assert b.has_blob(sha)
        assert b.read_blob(sha) == content
        assert b.put_blob(sha, content, device) is False  # already held: not stored twice
        assert b.missing_blobs([sha, "0" * 64]) == ["0" * 64]
    finally:
        a.close()
        b.close()


def _public_key() -> str:
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    from storage.identity import public_text

    return public_text(Ed25519PrivateKey.generate().public_key())


def test_several_addresses_make_one_url_that_asks_for_the_writable_server():
    from office.pgdb import conninfo

    url = conninfo(["postgresql://hub@10.0.0.1:5432/firm", "postgresql://hub@10.0.0.2:5433/firm"])
    parts = dict(p.split("=", 1) for p in url.split())
    assert parts["host"] == "10.0.0.1,10.0.0.2"
    assert parts["port"] == "5432,5433"
    assert parts["target_session_attrs"] == "read-write"
    assert parts["dbname"] == "firm"
    import pytest

    with pytest.raises(ValueError, match="dbname"):
        conninfo(["postgresql://hub@10.0.0.1/firm", "postgresql://hub@10.0.0.2/other"])


def test_the_hub_answers_unavailable_while_its_database_is_down_then_reconnects():
    import pytest

    from office.pgdb import DatabaseUnavailable
    from office.pgha import PgServer

    server = PgServer(durable=False).init().start()  # a folder of its own: the postgres user must reach it
    try:
        hub = HubStore(server.create_database("hub"))
        before = hub.hub_seq()
        server.kill()
        with pytest.raises(DatabaseUnavailable):
            hub.hub_seq()
        with pytest.raises(DatabaseUnavailable):  # still down: the reconnect fails in words, not a hang
            hub.hub_seq()
        server.start()
        assert hub.hub_seq() == before
        hub.close()
    finally:
        server.remove()
