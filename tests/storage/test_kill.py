"""Kill tests: a child process importing (or saving) is SIGKILLed at random points.

After every kill the database is either exactly as before or fully merged, and
``PRAGMA integrity_check`` passes. 50 import runs and 10 save runs in the suite.
"""

import os
import random
import shutil
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

from storage import Store
from storage.bundle import export_bundle
from tests.core.beams import glulam
from tests.storage.signing import introduce

ROOT = Path(__file__).resolve().parents[2]
IMPORT = (
    "import sys; from storage import Store; import storage.bundle as b; b.BATCH_OPS = int(sys.argv[3]); "
    "b.import_bundle(Store(sys.argv[1]), sys.argv[2])"
)


@pytest.fixture(scope="module")
def big(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("kill")
    src = Store(tmp / "src.db")
    site = src.create_site(name="Kill")
    with_ops = src.save_beam(site.id, glulam())
    for i in range(1500):
        src.update_beam(with_ops, {"b_mm": 80 + i % 50, "notes": f"edit {i}"})
    export_bundle(src, tmp / "big.zip")
    base = Store(tmp / "base.db")
    introduce(base, src)  # the child process importing into copies of base knows src's key, as from a hub
    base_digest = base.digest()
    base.close()
    full = Store(tmp / "full.db")
    from storage.bundle import import_bundle

    import_bundle(full, tmp / "big.zip")
    full_digest = full.digest()
    full.close()
    return tmp, base_digest, full_digest


def _check(db_path):
    conn = sqlite3.connect(db_path)
    assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    conn.close()
    return Store(db_path).digest()


@pytest.mark.parametrize("batch_ops", [2000, 300])
def test_killed_import_is_all_or_nothing(big, batch_ops):
    """One batch: before or after. Several batches: a consistent prefix that importing again completes."""
    tmp, base_digest, full_digest = big
    rng = random.Random(7)
    outcomes = {"before": 0, "merged": 0, "prefix": 0}
    for run in range(50 if batch_ops == 2000 else 20):
        db = tmp / f"run{run}.db"
        shutil.copy(tmp / "base.db", db)
        proc = subprocess.Popen(
            [sys.executable, "-c", IMPORT, str(db), str(tmp / "big.zip"), str(batch_ops)],
            cwd=ROOT,
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
        )
        time.sleep(rng.uniform(0.05, 1.5))
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        digest = _check(db)
        if batch_ops == 2000:
            assert digest in (base_digest, full_digest)
        s = Store(db)
        assert s.rebuild_projections() == s.projections()  # a prefix of the log, merged exactly
        from storage.bundle import import_bundle

        assert import_bundle(s, tmp / "big.zip").outcome == "applied"  # resumes
        assert s.digest() == full_digest
        s.close()
        outcomes["before" if digest == base_digest else "merged" if digest == full_digest else "prefix"] += 1
        for suffix in ("", "-wal", "-shm"):
            p = Path(str(db) + suffix)
            if p.exists():
                os.remove(p)
    assert sum(outcomes.values()) == (50 if batch_ops == 2000 else 20)


SAVE = (
    "import sys; from storage import Store; s = Store(sys.argv[1]); sid = s.create_site(name='k').id\n"
    "for i in range(100000): s.update_site(sid, {'address': str(i)})"
)


def test_killed_saves_leave_consistent_database(tmp_path):
    rng = random.Random(11)
    for run in range(10):
        db = tmp_path / f"s{run}.db"
        proc = subprocess.Popen([sys.executable, "-c", SAVE, str(db)], cwd=ROOT)
        time.sleep(rng.uniform(0.4, 1.2))
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        conn = sqlite3.connect(db)
        assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        conn.close()
        s = Store(db)
        # every committed save has its op, and the projection equals a replay of the log
        assert s.rebuild_projections() == s.projections()
        ops = s.db.execute("SELECT count(*) FROM op").fetchone()[0]
        assert int(s._meta()["seq"]) == ops
