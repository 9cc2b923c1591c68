"""Issue 10 item 10: file faults give one clear line and exit 1 or 2, never a traceback or a partial file."""

import os
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest

from mobile.cli import main
from storage import Store, StoreUnavailable
from storage.bundle import export_bundle
from tests.core.beams import glulam
from tests.storage.signing import introduce

ROOT = Path(__file__).resolve().parents[2]


def run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _one_line(err):
    assert "Traceback" not in err
    assert len(err.strip().splitlines()) == 1, err
    return err


@pytest.fixture
def site_db(tmp_path):
    s = Store(tmp_path / "s.db")
    site = s.create_site(name="Faults", project_number="P1")
    beam = s.save_beam(site.id, glulam())
    s.raise_deficiency(site.id, beam, "x", "immediate", "Grid A", "Bearing short", "O86", "Add bearing")
    s.close()
    return tmp_path / "s.db"


def test_not_a_database(tmp_path, capsys):
    (tmp_path / "x.db").write_text("hello, not sqlite")
    code, _, err = run(capsys, "sync", "digest", "--db", tmp_path / "x.db")
    assert code == 1
    assert "not a bracewalk database" in _one_line(err)


def test_truncated_database(site_db, capsys):
    raw = site_db.read_bytes()
    Store(site_db).close()
    site_db.write_bytes(raw[: len(raw) // 2])
    for suffix in ("-wal", "-shm"):
        Path(str(site_db) + suffix).unlink(missing_ok=True)
    code, _, err = run(capsys, "sync", "digest", "--db", site_db)
    assert code == 1, err
    _one_line(err)


def test_read_only_database_is_named(tmp_path):
    Store(tmp_path / "r.db").close()
    from storage.db import migrate, storage_error

    conn = sqlite3.connect(f"file:{tmp_path / 'r.db'}?mode=ro", uri=True, isolation_level=None)
    import sqlite_utils

    def write_to_it() -> None:
        conn.execute("PRAGMA user_version = 9")
        migrate(sqlite_utils.Database(conn))
        conn.execute("CREATE TABLE t (x)")

    with pytest.raises(sqlite3.Error) as info:
        write_to_it()
    assert "read-only" in str(storage_error(info.value, "r.db"))


def test_folder_given_as_database(tmp_path):
    with pytest.raises(StoreUnavailable, match="folder"):
        Store(tmp_path)


def test_export_to_missing_folder_and_folder_as_bundle(site_db, tmp_path, capsys):
    code, _, err = run(capsys, "sync", "export", "--db", site_db, "--out", tmp_path / "nope" / "b.zip")
    assert code == 2
    assert "no folder" in _one_line(err)
    code, _, err = run(capsys, "sync", "import", "--db", site_db, tmp_path)
    assert code == 2
    assert "folder" in _one_line(err)


ACK = "--acknowledge-memory-rows"  # the beam rests on table rows entered from memory (issue 16 item 6)


def test_report_to_unwritable_path_spends_no_number(site_db, tmp_path, capsys):
    (tmp_path / "afile").write_text("x")
    code, _, err = run(
        capsys, "report", "--db", site_db, "--site", "Faults", "--out", tmp_path / "afile" / "n.pdf", ACK
    )
    assert code == 1
    assert "cannot use" in _one_line(err)
    s = Store(site_db)
    assert s.notices(s.find_site("Faults").id) == []
    assert s._meta()["counter_notice"] == "0"
    code, out, err = run(capsys, "report", "--db", site_db, "--site", "Faults", "--out", tmp_path / "n.pdf", ACK)
    assert code == 0
    assert "P1-FR-" in out
    assert "-001" in out


def test_verify_missing_file(site_db, tmp_path, capsys):
    code, _, err = run(capsys, "report", "--db", site_db, "--verify", tmp_path / "none.pdf")
    assert code == 2
    _one_line(err)


FULL_DISK = """
import resource, signal, sys
signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
resource.setrlimit(resource.RLIMIT_FSIZE, (int(sys.argv[1]), int(sys.argv[1])))
from mobile.cli import main
raise SystemExit(main(sys.argv[2:]))
"""


@pytest.mark.parametrize("full_at", ["blobs", "database"])
def test_import_on_a_full_disk_leaves_no_partial_files(tmp_path, full_at):
    src = Store(tmp_path / "src.db")
    site = src.create_site(name="Full")
    if full_at == "blobs":
        for n in range(4):
            src.add_photo(site.id, os.urandom(150_000 if n < 2 else 300_000))
    else:
        src.add_photo(site.id, os.urandom(1000))
        beam = src.save_beam(site.id, glulam())
        for n in range(1500):
            src.update_beam(beam, {"notes": f"edit {n} " + "x" * 200})
    export_bundle(src, tmp_path / "b.zip")
    dst = Store(tmp_path / "dst.db")
    introduce(dst, src)  # the importing process knows src's key, as from a hub
    before = dst.digest()
    dst.close()
    # a file-size limit makes every write past 200 kB fail with "file too large", as a full disk would
    proc = subprocess.run(
        [sys.executable, "-c", FULL_DISK, "200000", "sync", "import", "--db", tmp_path / "dst.db", tmp_path / "b.zip"],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert proc.returncode == 1, proc.stderr
    _one_line(proc.stderr)
    assert "cannot rollback" not in proc.stderr
    assert not [p for p in (tmp_path / "dst-blobs").rglob("*") if p.is_file()]  # no partial, no orphan
    dst = Store(tmp_path / "dst.db")
    assert dst.digest() == before
    assert dst.db.execute("SELECT count(*) FROM blob").fetchone()[0] == 0
