"""Kill tests: a child process importing (or saving) is SIGKILLed at random points.

After every kill the database is either exactly as before, fully merged, or (an import of several batches) a
prefix that importing again completes, and ``PRAGMA integrity_check`` passes. 50 + 20 import runs and 10 save
runs in the suite. The child says when it started and when each transaction committed, so a child that fails
at once, or a kill that never lands mid-import, fails the test instead of passing it unseen.
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
# the child says when the import starts and when each of its transactions has committed (a line each), so the
# parent can kill it between batches as well as at a random moment
IMPORT = (
    "import sys, contextlib; from storage import Store; import storage.bundle as b; b.BATCH_OPS = int(sys.argv[3])\n"
    "real = b.transaction\n"
    "@contextlib.contextmanager\n"
    "def told(db):\n"
    "    with real(db):\n"
    "        yield\n"
    "    print('COMMITTED', flush=True)\n"
    "b.transaction = told\n"
    "s = Store(sys.argv[1]); print('STARTED', flush=True)\n"
    "b.import_bundle(s, sys.argv[2])"
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


def _line(proc):
    """The child's next line; fails with its error output when it ended instead."""
    line = proc.stdout.readline()
    if not line:
        _, err = proc.communicate()
        pytest.fail(f"the child ended (exit {proc.returncode}): {err[-2000:]}")
    return line.strip()


def _kill(proc):
    """SIGKILL the child; it must have been running, or have finished cleanly (never crashed)."""
    proc.send_signal(signal.SIGKILL)
    _, err = proc.communicate()  # and its pipes closed
    assert proc.returncode in (0, -signal.SIGKILL), f"exit {proc.returncode}: {err[-2000:]}"


@pytest.mark.parametrize("batch_ops", [2000, 300])
def test_killed_import_is_all_or_nothing(big, batch_ops):
    """One batch: before or after. Several batches: a consistent prefix that importing again completes.

    A third of the runs kill the child as soon as it has started, a third at a random moment after, and a
    third (several batches) just after its k-th transaction committed (k at random), so the before and
    between-batches cases are reached whatever the machine's speed.
    """
    tmp, base_digest, full_digest = big
    rng = random.Random(7)
    outcomes = {"before": 0, "merged": 0, "prefix": 0}
    runs = 50 if batch_ops == 2000 else 20
    batches = -(-1501 // batch_ops)  # the bundle holds 1,501 ops (a beam, then 1,500 edits)
    for run in range(runs):
        db = tmp / f"run{run}.db"
        shutil.copy(tmp / "base.db", db)
        proc = subprocess.Popen(
            [sys.executable, "-c", IMPORT, str(db), str(tmp / "big.zip"), str(batch_ops)],
            cwd=ROOT,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        assert _line(proc) == "STARTED"
        if run % 3 == 1 and batches > 1:
            for _ in range(rng.randint(1, batches - 1)):
                assert _line(proc) == "COMMITTED"
        elif run % 3 == 2:
            time.sleep(rng.uniform(0.0, 1.0))
        # else: killed as soon as it started, while it reads and verifies the bundle
        _kill(proc)
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
    assert outcomes["before"] > 0, outcomes  # killed before its first commit, at least once
    if batches > 1:
        # a kill just after the k-th commit leaves a prefix unless the rest committed before the signal landed
        assert outcomes["prefix"] >= runs // 6, outcomes


SAVE = (
    "import sys; from storage import Store; s = Store(sys.argv[1]); sid = s.create_site(name='k').id\n"
    "s.update_site(sid, {'address': '0'}); print('SAVED', flush=True)\n"
    "for i in range(1, 100000): s.update_site(sid, {'address': str(i)})"
)


def test_killed_saves_leave_consistent_database(tmp_path):
    """The child is killed while saving, after its first saves (it says when): every committed save is whole."""
    rng = random.Random(11)
    for run in range(10):
        db = tmp_path / f"s{run}.db"
        proc = subprocess.Popen(
            [sys.executable, "-c", SAVE, str(db)], cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True
        )
        assert _line(proc) == "SAVED"
        time.sleep(rng.uniform(0.0, 0.8))
        _kill(proc)
        assert proc.returncode == -signal.SIGKILL  # still saving when killed (100,000 saves take minutes)
        conn = sqlite3.connect(db)
        assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        conn.close()
        s = Store(db)
        # every committed save has its op, and the projection equals a replay of the log
        assert s.rebuild_projections() == s.projections()
        ops = s.db.execute("SELECT count(*) FROM op").fetchone()[0]
        assert ops >= 2, ops  # the site and its first address at least: the child had saved before the kill
        assert int(s._meta()["seq"]) == ops
        site = s.sites()[0]
        assert site.address == str(ops - 2), (site.address, ops)  # the last committed save is the one shown
