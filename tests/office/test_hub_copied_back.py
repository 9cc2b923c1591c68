"""An office hub whose database was put back from a backup by hand (not with ``bracewalk hub restore``).

``bracewalk hub restore`` gives the restored hub a new epoch, so every tablet forgets its hub cursors. A
database file copied back over the hub's (or a PostgreSQL dump restored into its database by hand) kept the
old epoch: the tablets' holdings check caught the loss only until a colleague had pushed the lost changes
back, after which the author's pull cursor stood past hub_seq numbers the copy had given to other changes,
which it never pulled (sync.md 3.3; invariants I3 no lost writes and I1 convergence, sync.md 3.11).
The hub now keeps a mark outside its database (its epoch and the highest hub_seq it handed out) and gives an
older copy a new epoch when it opens it.
"""

from __future__ import annotations

import shutil
from pathlib import Path

from mobile.hub_client import sync
from office.backup import _pg_tool
from office.hubstore import HubStore
from office.pgdb import conninfo
from tests.office.conftest import RunningHub
from tests.office.test_hub_restored import (
    _all_met,
    _b_saves_three,
    _kept_epoch,
    _ops,
    _point_at,
    _two_tablets_and_a_backup,
)


def _copied_back(served, kept):
    """Stop the hub, put the backup's database in place of its own by hand, open and serve it again."""
    hub = served.hub
    path, blob_dir, backend = hub.path, hub.blob_dir, hub.backend
    served.stop()
    hub.close()
    if backend == "sqlite":
        for leftover in (Path(path + "-wal"), Path(path + "-shm")):
            leftover.unlink(missing_ok=True)
        shutil.copyfile(kept / "hub.db", path)
        again = HubStore(path)
    else:
        _pg_tool(
            "pg_restore", "--no-owner", "--clean", "--if-exists", "--dbname", conninfo(path), str(kept / "hub.pgdump")
        )
        again = HubStore(path, blob_dir=blob_dir)
    return again, RunningHub(again).start()


def test_a_hub_copied_back_by_hand_starts_a_new_history_and_nothing_is_stranded(served, tmp_path):
    """The colleague pushes the author's lost saves back first; the author still gets the colleague's new saves."""
    a, b, beam_a, beam_b, kept = _two_tablets_and_a_backup(served, tmp_path)
    old_epoch = served.hub.epoch
    author, colleague = (a, b) if a.device_id > b.device_id else (b, a)
    author.update_beam(beam_a, {"b_mm": 175})  # acknowledged by the hub, then lost with its database
    author.update_beam(beam_a, {"d_mm": 532})
    assert sync(author).in_step
    assert sync(colleague).in_step  # the colleague holds the author's two saves
    handed_out = served.hub.hub_seq()
    copy, again = _copied_back(served, kept)
    try:
        for t in (a, b):
            _point_at(t, again.url)
        _b_saves_three(colleague, beam_b)
        assert sync(colleague).in_step
        assert sync(author).in_step
        assert sync(colleague).in_step
        _all_met(author, colleague, copy, beam_a, beam_b)  # before: the author never pulled the colleague's saves
        assert copy.epoch != old_epoch
        assert _kept_epoch(a) == _kept_epoch(b) == copy.epoch
        audit = copy.db.execute("SELECT detail FROM hub_audit WHERE event = 'epoch'").fetchall()
        (event,) = [d for (d,) in audit if "older copy" in d]
        assert "but this hub had handed out " + str(handed_out) in event
    finally:
        again.stop()
        copy.close()


def test_a_hub_opened_again_as_it_was_keeps_its_history(served, tmp_path):
    """No false alarm: a hub closed and opened again (a restart) keeps its epoch, and tablets keep their cursors."""
    a, b, *_ = _two_tablets_and_a_backup(served, tmp_path)
    hub = served.hub
    epoch, path, blob_dir = hub.epoch, hub.path, hub.blob_dir
    served.stop()
    hub.close()
    again = HubStore(path, blob_dir=blob_dir)
    running = RunningHub(again).start()
    try:
        assert again.epoch == epoch
        assert not [d for (d,) in again.db.execute("SELECT detail FROM hub_audit").fetchall() if "older copy" in d]
        cursor = a.db.execute("SELECT value FROM device_key WHERE key='hub_cursor'").fetchone()[0]
        for t in (a, b):
            _point_at(t, running.url)
            assert sync(t).in_step
        assert a.db.execute("SELECT value FROM device_key WHERE key='hub_cursor'").fetchone()[0] == cursor
        assert _kept_epoch(a) == _kept_epoch(b) == epoch
        assert _ops(again.db) == _ops(a.db) == _ops(b.db)
    finally:
        running.stop()
        again.close()
