"""A consistent backup of the hub, and its restore into a fresh hub (sync.md 4: a restore drill in CI).

A backup is a folder:

- SQLite hub: ``hub.db`` made by ``VACUUM INTO`` (one consistent copy, taken while the hub serves)
  and ``blobs/``, the photos and PDFs, copied after it (a blob is stored before the op naming it
  is accepted, so every blob the copied ops name is already there);
- PostgreSQL hub: ``hub.pgdump``, ``pg_dump --format=custom`` (one snapshot of every table, blob
  bytes included, since they live in the database).

Restore goes into an empty target only (a new SQLite path, or an empty PostgreSQL database) and
never over a live hub. The restored hub keeps its hub id, devices and keys, so tablets sync on
without enrolling again, but it gets a new epoch (``HubStore.begin_new_epoch``): its history from
the backup on is not the one the tablets' cursors followed. Each tablet sees the new epoch at its
next sync, whatever order they sync in, pushes again whatever the hub does not hold and pulls from
the start (mobile/hub_client.py). A hub copied back by hand keeps its epoch: run the restore
through here.
"""

from __future__ import annotations

import shutil
import sqlite3
import subprocess
from pathlib import Path

from office.hubstore import HubStore, is_postgres_url
from office.pgdb import conninfo
from office.pgha import pg_bindir


def backup(db: str, out: Path, blob_dir: Path | None = None) -> Path:
    """Write a consistent backup of the hub at ``db`` into the new folder ``out``; returns ``out``."""
    out.mkdir(parents=True, exist_ok=False)
    if is_postgres_url(db.split(" ")[0]):
        _pg_tool("pg_dump", "--format=custom", "--no-owner", "--file", str(out / "hub.pgdump"), conninfo(db))
        return out
    source = Path(db)
    if not source.exists():
        msg = f"no hub database at {source}"
        raise FileNotFoundError(msg)
    conn = sqlite3.connect(source)
    try:
        conn.execute("VACUUM INTO ?", [str(out / "hub.db")])
    finally:
        conn.close()
    blobs = blob_dir or source.parent / (source.stem + "-blobs")
    if blobs.exists():
        shutil.copytree(blobs, out / "blobs")
    return out


def restore(backup_dir: Path, db: str, blob_dir: Path | None = None) -> HubStore:
    """Restore a backup folder into an empty target (a new SQLite file or an empty PostgreSQL database)."""
    if is_postgres_url(db.split(" ")[0]):
        dump = backup_dir / "hub.pgdump"
        if not dump.exists():
            msg = f"{dump} is missing: that is not a backup of a PostgreSQL hub"
            raise FileNotFoundError(msg)
        hub = HubStore(db)
        try:
            held = int(hub.db.execute("SELECT count(*) FROM hub_device").fetchone()[0])
            held += int(hub.db.execute("SELECT count(*) FROM op").fetchone()[0])
        finally:
            hub.close()
        if held:
            msg = "the target database already holds a hub: restore only into an empty database"
            raise FileExistsError(msg)
        _pg_tool("pg_restore", "--no-owner", "--clean", "--if-exists", "--dbname", conninfo(db), str(dump))
        return _new_history(HubStore(db), backup_dir)
    source = backup_dir / "hub.db"
    if not source.exists():
        msg = f"{source} is missing: that is not a backup of an SQLite hub"
        raise FileNotFoundError(msg)
    target = Path(db)
    if target.exists():
        msg = f"{target} exists: restore only into a new file"
        raise FileExistsError(msg)
    target.parent.mkdir(parents=True, exist_ok=True)
    shutil.copyfile(source, target)
    if (backup_dir / "blobs").exists():
        shutil.copytree(backup_dir / "blobs", blob_dir or target.parent / (target.stem + "-blobs"))
    return _new_history(HubStore(target, blob_dir=blob_dir), backup_dir)


def _new_history(hub: HubStore, backup_dir: Path) -> HubStore:
    """A restored hub starts a new epoch, so every tablet forgets its hub cursors at its next sync.

    What the lost hub acknowledged after the backup is gone, and the hub_seq numbers past the backup's last
    one will name other ops than the lost hub gave them.
    """
    hub.begin_new_epoch(f"restored from the backup {backup_dir.name}")
    return hub


def _pg_tool(tool: str, *args: str) -> None:
    bindir = pg_bindir()
    if bindir is None:
        msg = f"{tool} is not installed (scripts/setup.sh installs Debian's postgresql)"
        raise RuntimeError(msg)
    done = subprocess.run([str(bindir / tool), *args], capture_output=True, text=True, timeout=3600)
    if done.returncode != 0:
        msg = f"{tool} failed: {done.stderr.strip()}"
        raise RuntimeError(msg)
