"""The synchronous pair (office.pgha, scripts/hub_pg_pair.py): a commit is on the standby when it returns."""

from __future__ import annotations

import subprocess
import sys
import tempfile
from pathlib import Path

import psycopg
import pytest

from office.pgha import SyncPair, pg_bindir

pytestmark = pytest.mark.skipif(pg_bindir() is None, reason="PostgreSQL is not installed")


def test_a_hub_push_is_applied_on_the_standby_before_it_is_acknowledged():
    pair = SyncPair(durable=False).start()
    try:
        urls = pair.create_database("hub")
        with psycopg.connect(urls[0], autocommit=True) as conn:
            settings = dict(conn.execute("SELECT name, setting FROM pg_settings WHERE name LIKE 'synchronous%'"))
            assert settings["synchronous_commit"] == "remote_apply"
            assert settings["synchronous_standby_names"] == "*"
            conn.execute("CREATE TABLE t (n INT)")
            for n in range(20):
                conn.execute("INSERT INTO t VALUES (%s)", [n])
                # remote_apply: when the commit returns, a read on the standby already sees it
                with psycopg.connect(urls[1], autocommit=True) as standby:
                    assert standby.execute("SELECT count(*) FROM t").fetchone() == (n + 1,)
        with psycopg.connect(urls[1], autocommit=True) as standby:
            assert standby.execute("SELECT pg_is_in_recovery()").fetchone() == (True,)
            with pytest.raises(psycopg.errors.ReadOnlySqlTransaction):
                standby.execute("INSERT INTO t VALUES (99)")
    finally:
        pair.remove()


def test_the_script_starts_a_pair_and_prints_the_serve_line():
    folder = Path(tempfile.mkdtemp(prefix="bracewalk-pair-")) / "pg"
    folder.parent.chmod(0o755)  # run as root, the servers run as postgres, who must reach the folder
    script = Path(__file__).resolve().parents[2] / "scripts" / "hub_pg_pair.py"
    try:
        out = subprocess.run(
            [sys.executable, str(script), "start", "--dir", str(folder)], capture_output=True, text=True, timeout=180
        )
        assert out.returncode == 0, out.stderr
        serve = [line for line in out.stdout.splitlines() if line.startswith("bracewalk hub serve")]
        assert len(serve) == 1
        assert serve[0].count("--db postgresql://") == 2
        status = subprocess.run(
            [sys.executable, str(script), "status", "--dir", str(folder)], capture_output=True, text=True, timeout=60
        )
        assert status.stdout.count("running") == 2
    finally:
        subprocess.run([sys.executable, str(script), "stop", "--dir", str(folder)], capture_output=True, timeout=120)
        import shutil

        shutil.rmtree(folder.parent, ignore_errors=True)
