"""A tablet whose clock is off by more than the hub's request window still enrols and syncs, and is told to fix it.

The hub refuses a signed request more than 10 minutes from its own clock, against replays (sync.md 3.9).
A tablet's clock set by hand on site (common practice: tablets on a site without network time drift or
are set wrong) was refused at every sync, with the two times in milliseconds as the only reason, so a
day's records stayed on the tablet. Requests are now timed by the hub's clock as the session's hello
gave it; the stamps on the records stay the tablet's own (sync.md 3.3: stamps far ahead are held).
"""

import time

import pytest

from mobile.hub_client import HubError, request, sync
from mobile.viewmodels.sync import SyncViewModel
from storage import Store
from storage.identity import enrolment, sign_request
from tests.core.beams import glulam

MIN = 60 * 1000


def _hub_clock(served, offset_ms):
    served.hub.clock_ms = lambda: int(time.time() * 1000) + offset_ms


def test_a_tablet_thirty_minutes_behind_enrols_syncs_and_is_told(served, tmp_path):
    _hub_clock(served, 30 * MIN)  # the office's clock 30 min ahead of the tablet's: the tablet is behind
    store = Store(tmp_path / "slow.db")
    vm = SyncViewModel(store)
    assert vm.enroll(served.url, served.hub.new_code("Slow", "S. Rev", "reviewer")).startswith("Enrolled as Slow")
    site = store.create_site(name="Clock behind")
    store.save_beam(site.id, glulam(mark="CB-1"))
    words = vm.sync_now()
    assert words.startswith("Sent "), words
    assert "30 min behind the office clock: set its date and time" in words
    assert store.digest() == served.hub.digest()  # everything logged reached the office


def test_a_tablet_thirty_minutes_ahead_syncs_and_its_stamps_are_held_as_ahead(served, tmp_path):
    _hub_clock(served, -30 * MIN)
    store = Store(tmp_path / "fast.db")
    vm = SyncViewModel(store)
    assert vm.enroll(served.url, served.hub.new_code("Fast", "F. Rev", "reviewer")).startswith("Enrolled as Fast")
    store.create_site(name="Clock ahead")
    words = vm.sync_now()
    assert "30 min ahead of the office clock" in words
    # the request was accepted; the op stamped 30 min ahead is held as sync.md 3.3 says, not lost
    assert [r["reason"].split(":")[0] for r in sync(store).rejected] == ["clock_ahead"]


def test_a_request_timed_outside_the_window_is_still_refused(served, tmp_path):
    """Replays: a request signed by the tablet's own clock 30 min off the hub's is refused, as before."""
    store = served.tablet(tmp_path / "t.db")
    auth = enrolment(store.db)
    _hub_clock(served, 30 * MIN)
    headers = sign_request(auth.key, auth.device_id, "GET", "/v1/devices", b"")
    with pytest.raises(HubError, match="more than 10 minutes from the hub's clock"):
        request(served.url, "GET", "/v1/devices", extra=headers)
    offset = sign_request(auth.key, auth.device_id, "GET", "/v1/devices", b"", 30 * MIN)
    assert b"devices" in request(served.url, "GET", "/v1/devices", extra=offset)
