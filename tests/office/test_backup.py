"""Backup and restore drill: back up a live hub, lose it, restore into a fresh hub, the tablets sync on.

A tablet that synced after the backup was taken still holds what the lost hub had acknowledged; it
meets a hub behind its cursor, pushes again what the hub lacks and pulls from the start. In the end
nothing is lost (every op any tablet made is on the restored hub) and nothing is repeated (each op
once in the hub's log and in each tablet), and every replica shows one digest.
"""

from __future__ import annotations

import pytest

from office.backup import backup, restore
from tests.office.conftest import RunningHub
from tests.office.fleet import SimTablet


def _point_at(t: SimTablet, url: str) -> None:
    """The restored hub answers at the office's usual address (here: a new port)."""
    t.store.db.execute("UPDATE device_key SET value=? WHERE key='hub_url'", [url])


@pytest.mark.parametrize("backend", ["sqlite", "postgresql"])
def test_restore_into_a_fresh_hub_then_tablets_sync_on_losing_and_repeating_nothing(request, backend, tmp_path):
    from tests.office.conftest import make_hub

    hub = make_hub(request, backend, tmp_path / "hub")
    running = RunningHub(hub).start()
    tablets = [SimTablet(tmp_path, running.url, hub, i) for i in range(3)]
    for t in tablets:
        t.edit(5)
        t.sync()
    for t in tablets:
        t.sync()
    kept = backup(hub.path, tmp_path / "backup", blob_dir=hub.blob_dir if backend == "sqlite" else None)
    tablets[0].edit(4)
    tablets[0].sync()  # acknowledged by the hub about to be lost, not in the backup
    running.stop()
    hub_id = hub.hub_id
    hub.close()

    if backend == "sqlite":
        target = str(tmp_path / "restored" / "hub.db")
    else:
        target = request.getfixturevalue("pg_cluster").new_database()
    restored = restore(kept, target)
    assert restored.hub_id == hub_id
    assert len(restored.devices()) == 3
    assert len(restored.db.execute("SELECT * FROM op").fetchall()) == 3 * (2 + 5)  # as at the backup
    again = RunningHub(restored).start()
    try:
        for t in tablets:
            _point_at(t, again.url)
            t.edit(3)
            t.sync()
        for t in tablets:
            t.sync()
        every = set().union(*(t.own_ops() for t in tablets))
        assert len(every) == 3 * (2 + 5 + 3) + 4
        on_hub = set(restored.db.execute("SELECT origin, seq FROM op").fetchall())
        logged = restored.db.execute("SELECT origin, seq FROM hub_log").fetchall()
        assert on_hub == every  # nothing lost, including what only the lost hub had acknowledged
        assert len(logged) == len(set(logged)) == len(every)  # nothing logged twice
        assert all(t.ops() == every for t in tablets)
        assert len({t.store.digest() for t in tablets} | {restored.digest()}) == 1
    finally:
        again.stop()
        restored.close()
        for t in tablets:
            t.store.close()


def test_restore_refuses_a_target_that_holds_a_hub(tmp_path):
    from office.hubstore import HubStore

    hub = HubStore(tmp_path / "hub.db")
    kept = backup(str(tmp_path / "hub.db"), tmp_path / "backup")
    with pytest.raises(FileExistsError):
        restore(kept, str(tmp_path / "hub.db"))
    hub.close()


def test_backup_and_restore_commands(tmp_path):
    import subprocess
    import sys

    from office.hubstore import HubStore

    hub = HubStore(tmp_path / "hub.db")
    hub.new_code("T", "P", "reviewer")
    hub_id = hub.hub_id
    hub.close()
    cli = [sys.executable, "-m", "mobile.cli", "hub"]
    out = subprocess.run(
        [*cli, "backup", "--db", str(tmp_path / "hub.db"), "--out", str(tmp_path / "b")], capture_output=True, text=True
    )
    assert out.returncode == 0, out.stderr
    out = subprocess.run(
        [*cli, "restore", str(tmp_path / "b"), "--db", str(tmp_path / "new.db")], capture_output=True, text=True
    )
    assert out.returncode == 0, out.stderr
    assert hub_id in out.stdout, out.stderr
    again = subprocess.run(
        [*cli, "restore", str(tmp_path / "b"), "--db", str(tmp_path / "new.db")], capture_output=True, text=True
    )
    assert again.returncode != 0
    assert "exists" in again.stderr
