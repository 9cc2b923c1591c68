"""The office hub restored from a backup: nothing a tablet logged is lost or stranded, whoever syncs first.

What the lost hub acknowledged after the backup, and the hub_seq numbers it gave, are gone from the
restored one. Every tablet must push again what the hub lacks and pull what it lacks at its next
sync. The restore gives the hub a new epoch (``HubStore.begin_new_epoch``), which a tablet sees in the
hello; a hub without epochs (an older one, or one copied back by hand) is caught by what it reports
holding per origin. The checks are the invariants of sync.md 3.11: I3 (no lost writes: every op on
every replica) and I1 (convergence: one digest).
"""

from __future__ import annotations

import json

import pytest

import mobile.hub_client as hub_client
from mobile.hub_client import HubError, sync
from mobile.viewmodels.sync import SyncViewModel
from office.backup import backup, restore
from tests.core.beams import glulam
from tests.office.conftest import RunningHub


def _point_at(store, url):
    """The restored hub answers at the office's usual address (here: a new port)."""
    store.db.execute("UPDATE device_key SET value=? WHERE key='hub_url'", [url])


def _restored(request, served, kept, tmp_path):
    """Stop the served hub and restore ``kept`` into a fresh target of the same backend; the new hub, served."""
    served.stop()
    if served.hub.backend == "sqlite":
        target = str(tmp_path / "restored" / "hub.db")
    else:
        target = request.getfixturevalue("pg_cluster").new_database()
    restored = restore(kept, target)
    return restored, RunningHub(restored).start()


def _backup(served, tmp_path):
    hub = served.hub
    return backup(hub.path, tmp_path / "backup", blob_dir=hub.blob_dir if hub.backend == "sqlite" else None)


def _kept_epoch(store):
    """The hub epoch the tablet's cursors belong to (None before it met one)."""
    row = store.db.execute("SELECT value FROM device_key WHERE key='hub_epoch'").fetchone()
    return row[0] if row else None


def _ops(db):
    return set(db.execute("SELECT origin, seq FROM op").fetchall())


def _two_tablets_and_a_backup(served, tmp_path):
    """Tablets A and B each with a beam, both synced; then the hub is backed up."""
    a = served.tablet(tmp_path / "a.db", "Tablet A", "A. Rev", "reviewer")
    b = served.tablet(tmp_path / "b.db", "Tablet B", "B. Rev", "reviewer")
    site = a.create_site(name="Hub restore")
    beam_a = a.save_beam(site.id, glulam(mark="A-1"))
    sync(a)
    sync(b)
    beam_b = b.save_beam(site.id, glulam(mark="B-1"))
    sync(b)
    sync(a)
    return a, b, beam_a, beam_b, _backup(served, tmp_path)


def _b_saves_three(b, beam_b):
    b.update_beam(beam_b, {"b_mm": 80})
    b.update_beam(beam_b, {"d_mm": 304})
    b.update_beam(beam_b, {"notes": "checked"})


def _all_met(a, b, hub, beam_a, beam_b):
    assert (a.beam(beam_b).b_mm, a.beam(beam_b).d_mm) == (80, 304)  # B's saves reach A
    assert (b.beam(beam_a).b_mm, b.beam(beam_a).d_mm) == (175, 532)  # A's saves reach B
    assert _ops(a.db) == _ops(b.db) == _ops(hub.db)  # I3: every op on every replica
    logged = hub.db.execute("SELECT origin, seq FROM hub_log").fetchall()
    assert len(logged) == len(set(logged)) == len(_ops(hub.db))  # nothing logged twice
    assert len({a.digest(), b.digest(), hub.digest()}) == 1  # I1


def test_a_colleague_syncs_first_after_the_restore(request, served, tmp_path):
    """A's two acknowledged saves are lost with the hub; B pushes enough first that hub_seq passes A's cursor."""
    a, b, beam_a, beam_b, kept = _two_tablets_and_a_backup(served, tmp_path)
    a.update_beam(beam_a, {"b_mm": 175})  # acknowledged by the hub about to be lost
    a.update_beam(beam_a, {"d_mm": 532})
    assert sync(a).in_step
    restored, again = _restored(request, served, kept, tmp_path)
    try:
        for t in (a, b):
            _point_at(t, again.url)
        _b_saves_three(b, beam_b)
        assert sync(b).in_step
        assert restored.hub_seq() >= int(
            a.db.execute("SELECT value FROM device_key WHERE key='hub_cursor'").fetchone()[0]
        )
        assert sync(a).in_step  # one sync each is enough
        assert sync(b).in_step
        _all_met(a, b, restored, beam_a, beam_b)
        assert _kept_epoch(a) == _kept_epoch(b) == restored.epoch
    finally:
        again.stop()
        restored.close()


def test_a_colleague_relays_the_lost_changes_before_their_author_syncs(request, served, tmp_path):
    """The colleague had pulled the author's lost saves: it pushes them back first, with new saves of its own.

    The colleague's origin sorts first, so the restored hub numbers its new saves before the relayed ones,
    at hub_seq numbers the author had already pulled past. What the hub holds per origin then shows nothing
    missing to the author: only the epoch tells it to pull from the start.
    """
    a, b, beam_a, beam_b, kept = _two_tablets_and_a_backup(served, tmp_path)
    author, colleague = (a, b) if a.device_id > b.device_id else (b, a)
    author.update_beam(beam_a, {"b_mm": 175})
    author.update_beam(beam_a, {"d_mm": 532})
    assert sync(author).in_step
    assert sync(colleague).in_step  # the colleague now holds the author's two saves
    restored, again = _restored(request, served, kept, tmp_path)
    try:
        for t in (a, b):
            _point_at(t, again.url)
        _b_saves_three(colleague, beam_b)
        assert sync(colleague).in_step
        assert _ops(restored.db) == _ops(author.db) | _ops(colleague.db)  # every op is on the hub again
        assert sync(author).in_step
        assert sync(colleague).in_step
        _all_met(author, colleague, restored, beam_a, beam_b)
    finally:
        again.stop()
        restored.close()


def test_restore_gives_a_new_epoch_and_keeps_the_hub_id(request, served, tmp_path):
    before = (served.hub.hub_id, served.hub.epoch)
    kept = _backup(served, tmp_path)
    restored, again = _restored(request, served, kept, tmp_path)
    try:
        assert restored.hub_id == before[0]
        assert restored.epoch != before[1]
        assert len(restored.epoch) == 32
        hello = json.loads(hub_client.request(again.url, "GET", "/v1/hub"))
        assert hello["epoch"] == restored.epoch
        assert any(event == "epoch" for _, event, _ in _audit(restored))
    finally:
        again.stop()
        restored.close()


def _audit(hub):
    rows = hub.db.execute("SELECT at_ms, event, detail FROM hub_audit WHERE device_id IS NULL ORDER BY id").fetchall()
    return [(int(r[0]), str(r[1]), str(r[2])) for r in rows]


def _without_epoch(monkeypatch):
    """Answers as a hub made before epochs gives them (no ``epoch`` key anywhere)."""
    real = hub_client.request

    def old_hub(*args, **kwargs):
        data = real(*args, **kwargs)
        if data[:1] != b"{":
            return data
        answer = json.loads(data)
        answer.pop("epoch", None)
        return json.dumps(answer).encode()

    monkeypatch.setattr(hub_client, "request", old_hub)


@pytest.mark.parametrize("saves_before_syncing", [False, True], ids=["pull-shows-it", "push-answer-shows-it"])
def test_a_hub_without_epochs_is_caught_by_what_it_holds(request, served, tmp_path, monkeypatch, saves_before_syncing):
    """No epoch in the hello (an older hub, or one copied back by hand): the hub's holdings show the loss.

    The hub's holdings per origin fall below what it acknowledged to A, so A pushes its lost saves again
    and pulls from the start.

    Seen in the first pulled page, or, when A saved again after the restore, in the answer to its push.
    """
    _without_epoch(monkeypatch)
    a, b, beam_a, beam_b, kept = _two_tablets_and_a_backup(served, tmp_path)
    a.update_beam(beam_a, {"b_mm": 175})
    a.update_beam(beam_a, {"d_mm": 532})
    assert sync(a).in_step
    restored, again = _restored(request, served, kept, tmp_path)
    try:
        for t in (a, b):
            _point_at(t, again.url)
        _b_saves_three(b, beam_b)
        assert sync(b).in_step
        if saves_before_syncing:
            a.update_beam(beam_a, {"notes": "seen again"})
        assert sync(a).in_step
        assert sync(b).in_step
        _all_met(a, b, restored, beam_a, beam_b)
        assert _kept_epoch(a) is None  # nothing kept from a hub that names none
    finally:
        again.stop()
        restored.close()


def test_the_sync_screen_counts_the_lost_changes_as_waiting(request, served, tmp_path, monkeypatch):
    """The restored hub lacks two of A's saves and A's push fails: the Sync screen counts them as waiting."""
    a, b, beam_a, beam_b, kept = _two_tablets_and_a_backup(served, tmp_path)
    a.update_beam(beam_a, {"b_mm": 175})
    a.update_beam(beam_a, {"d_mm": 532})
    assert sync(a).in_step
    view = SyncViewModel(a)
    assert view.waiting() == "nothing waiting for the office"
    restored, again = _restored(request, served, kept, tmp_path)
    real = hub_client.request

    def push_lost(url, method, path, *args, **kwargs):
        if path == "/v1/push":
            msg = "cannot reach the office hub: the network dropped"
            raise HubError(msg)
        return real(url, method, path, *args, **kwargs)

    try:
        for t in (a, b):
            _point_at(t, again.url)
        _b_saves_three(b, beam_b)
        assert sync(b).in_step  # the hub's hub_seq passes A's cursor: only the epoch shows the restore
        monkeypatch.setattr(hub_client, "request", push_lost)
        with pytest.raises(HubError):
            sync(a)
        assert view.waiting() == "2 changes waiting for the office"
        assert not view.status().startswith("Everything sent and confirmed")
        monkeypatch.setattr(hub_client, "request", real)
        assert sync(a).in_step
        assert view.waiting() == "nothing waiting for the office"
        assert (restored.db.execute("SELECT count(*) FROM op WHERE origin=?", [a.device_id]).fetchone()[0]) == len(
            [o for o in _ops(a.db) if o[0] == a.device_id]
        )
    finally:
        again.stop()
        restored.close()


def test_a_device_enrolled_after_the_backup_does_not_stop_its_colleagues(request, served, tmp_path):
    """C was enrolled after the backup: the restored hub has never heard of it and refuses its ops whole.

    B holds C's saves (pulled before the restore). B's own lost saves must still go back at its next sync:
    C's ops wait on B (the hub would refuse the whole push for them) until the office enrols C again.
    """
    a, b, _beam_a, beam_b, kept = _two_tablets_and_a_backup(served, tmp_path)
    c = served.tablet(tmp_path / "c.db", "Tablet C", "C. Rev", "reviewer")
    sync(c)
    beam_c = c.save_beam(c.sites()[0].id, glulam(mark="C-1"))
    assert sync(c).in_step
    _b_saves_three(b, beam_b)
    assert sync(b).in_step  # B holds C's beam; the hub acknowledged B's three saves
    restored, again = _restored(request, served, kept, tmp_path)
    try:
        for t in (a, b, c):
            _point_at(t, again.url)
        assert sync(b).in_step  # before: refused whole ("comes from a device never enrolled"), nothing sent
        assert _ops(restored.db) >= {o for o in _ops(b.db) if o[0] == b.device_id}
        assert len([o for o in _ops(b.db) if o[0] == c.device_id]) == 1  # C's one save
        said = SyncViewModel(b).sync_now()  # the Sync screen says C's change waits on B, and why
        assert "1 change from another tablet waits on this one: the office takes it only from a tablet it lists" in said
        assert c.device_id not in {o[0] for o in _ops(restored.db)}
        hub_client.enroll(c, again.url, restored.new_code("Tablet C", "C. Rev", "reviewer"))
        for t in (c, a, b, a):
            assert sync(t).in_step
        assert _ops(a.db) == _ops(b.db) == _ops(c.db) == _ops(restored.db)
        assert a.beam(beam_c).mark == "C-1"
        assert len({a.digest(), b.digest(), c.digest(), restored.digest()}) == 1
    finally:
        again.stop()
        restored.close()


def test_an_answer_from_another_history_within_one_sync_moves_nothing(served, tmp_path, monkeypatch):
    """The hub is restored between the hello and the push answer: that answer is refused, nothing moves.

    It belongs to a history the tablet's cursors do not follow, so the change still counts as waiting.
    """
    a = served.tablet(tmp_path / "a.db", "Tablet A", "A. Rev", "reviewer")
    site = a.create_site(name="Mid-sync restore")
    assert sync(a).in_step
    a.save_beam(site.id, glulam(mark="A-9"))
    real = hub_client.request

    def restored_meanwhile(url, method, path, *args, **kwargs):
        data = real(url, method, path, *args, **kwargs)
        if path == "/v1/push":
            return json.dumps(dict(json.loads(data), epoch="0" * 32)).encode()
        return data

    monkeypatch.setattr(hub_client, "request", restored_meanwhile)
    with pytest.raises(HubError, match="restored from a backup during this sync"):
        sync(a)
    assert SyncViewModel(a).waiting() == "1 change waiting for the office"
    monkeypatch.setattr(hub_client, "request", real)
    assert sync(a).in_step
    assert SyncViewModel(a).waiting() == "nothing waiting for the office"
