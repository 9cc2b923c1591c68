"""Helpers for tests of devices that exchange bundle files, are backed up and are restored."""

import shutil
from pathlib import Path

from storage import Store
from storage.bundle import export_bundle, import_bundle


def sync_file(src, dst, path, peer=None):
    """``src`` exports a bundle (for ``peer``) to ``path`` and ``dst`` imports it; the import must apply."""
    export_bundle(src, path, peer=peer)
    report = import_bundle(dst, path)
    assert report.outcome == "applied", report
    return report


def backup(store, to):
    """Copy the database as a backup would (its WAL folded in first)."""
    store.db.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    shutil.copyfile(store.path, to)


def restore(store, frm, keep_mark=True):
    """The database copied back over the tablet's; ``keep_mark``: the ``.sent`` mark beside it survived."""
    path = store.path
    store.close()
    for suffix in ("-wal", "-shm"):
        Path(path + suffix).unlink(missing_ok=True)
    shutil.copyfile(frm, path)
    if not keep_mark:
        Path(path + ".sent").unlink(missing_ok=True)
    return Store(path)
