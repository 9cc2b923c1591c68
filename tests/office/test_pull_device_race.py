"""A tablet enrolled while a colleague's sync is between its device list and its pull (review s34).

The colleague's sync learns the device list before it pushes and pulls; the newcomer's ops then come
from a device that list did not name. The pull fetches the list once more and applies them; ops set
aside that way before are tried again at each sync, once the list was fetched.
"""

from mobile import hub_client
from mobile.hub_client import sync
from storage import identity
from storage.hubsync import pull_quarantine
from tests.core.beams import glulam


def test_ops_of_a_device_enrolled_during_a_sync_arrive_in_that_sync(served, tmp_path, monkeypatch):
    monkeypatch.setattr(identity, "trusted_key", identity.trusted_key.__wrapped__)  # the real lookup, no suite keys
    a = served.tablet(tmp_path / "a.db", "Tablet A", "A. Rev", "reviewer")
    site = a.create_site(name="Race")
    a.save_beam(site.id, glulam(mark="A-1"))
    sync(a)
    real_push = hub_client._push
    newcomer = {}

    def push_then_a_new_tablet_syncs(*args, **kw):
        real_push(*args, **kw)
        if not newcomer:  # meanwhile, at the office, a new tablet is enrolled and syncs its first beam
            newcomer["busy"] = True  # its own syncs push through here too
            x = served.tablet(tmp_path / "x.db", "Tablet X", "X. Rev", "reviewer")
            sync(x)
            x.save_beam(site.id, glulam(mark="X-1"))
            sync(x)
            newcomer["x"] = x

    monkeypatch.setattr(hub_client, "_push", push_then_a_new_tablet_syncs)
    result = sync(a)
    monkeypatch.setattr(hub_client, "_push", real_push)
    assert result.pulled_new >= 1
    assert pull_quarantine(a) == []
    assert any(d.get("mark") == "X-1" for _, d in a.beams(site.id))
    sync(newcomer["x"])
    assert a.digest() == served.hub.digest() == newcomer["x"].digest()


def test_ops_set_aside_for_an_unlisted_device_are_applied_at_the_next_sync(served, tmp_path, monkeypatch):
    """A tablet that set them aside before this fix (or whose fetched list still lacked the device) gets them."""
    monkeypatch.setattr(identity, "trusted_key", identity.trusted_key.__wrapped__)
    a = served.tablet(tmp_path / "a.db", "Tablet A", "A. Rev", "reviewer")
    site = a.create_site(name="Set aside")
    sync(a)
    x = served.tablet(tmp_path / "x.db", "Tablet X", "X. Rev", "reviewer")
    sync(x)
    x.save_beam(site.id, glulam(mark="X-1"))
    sync(x)
    monkeypatch.setattr(hub_client, "learn_devices", lambda *args: 0)  # a list fetched before X was enrolled
    sync(a)
    assert {q["origin"] for q in pull_quarantine(a)} == {x.device_id}
    monkeypatch.undo()
    monkeypatch.setattr(identity, "trusted_key", identity.trusted_key.__wrapped__)
    result = sync(a)
    assert result.pulled_new == 1
    assert pull_quarantine(a) == []
    assert a.digest() == served.hub.digest() == x.digest()
