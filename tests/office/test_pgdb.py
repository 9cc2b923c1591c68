"""The PostgreSQL adapter: the SQLite forms it translates, and migrations that can run twice."""

from office.hubstore import HubStore
from office.pgdb import PG_MIGRATIONS, migrate, translate


def test_translate_placeholders_and_upserts():
    assert translate("SELECT seq FROM seen WHERE origin=?") == "SELECT seq FROM seen WHERE origin=%s"
    assert translate("INSERT OR REPLACE INTO seen VALUES (?, ?)") == (
        "INSERT INTO seen (origin, seq) VALUES (%s, %s) ON CONFLICT (origin) DO UPDATE SET seq = excluded.seq"
    )
    assert translate("INSERT OR IGNORE INTO op_sig VALUES (?, ?, ?)") == (
        "INSERT INTO op_sig VALUES (%s, %s, %s) ON CONFLICT DO NOTHING"
    )
    assert translate("SELECT 1 WHERE x LIKE '5%'") == "SELECT 1 WHERE x LIKE '5%%'"


def test_pg_migrations_run_twice_and_the_hub_reopens_with_its_id(pg_cluster, tmp_path):
    url = pg_cluster.new_database()
    hub = HubStore(url, blob_dir=tmp_path)
    first_id = hub.hub_id
    assert migrate(hub.db) == max(PG_MIGRATIONS)
    hub.close()
    again = HubStore(url, blob_dir=tmp_path)
    assert again.hub_id == first_id
    ids = ["a-b", "a:c", "aB", "a_b", "A1", "0x"]
    for i in ids:
        again.db.execute("INSERT INTO site (id, site_id, data) VALUES (?, ?, '{}')", [i, i])
    stored = [r[0] for r in again.db.execute("SELECT id FROM site ORDER BY id").fetchall()]
    again.close()
    assert stored == sorted(ids)  # code-point order, as SQLite sorts, so digests agree across backends
