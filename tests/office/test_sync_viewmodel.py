"""The Sync screen's view model with the office hub: enrol, sync now, automatic sync with backoff."""

import socket

from mobile.viewmodels.sync import AutoSync, SyncViewModel
from storage import Store
from storage.identity import new_private_key, save_enrolment


def test_enrol_then_sync_now_from_the_view_model(served, tmp_path):
    store = Store(tmp_path / "t.db")
    vm = SyncViewModel(store)
    assert "Not enrolled" in vm.hub_status()
    assert "http://" in vm.enroll("office:8470", "X")  # the address is checked before any traffic
    assert vm.enroll(served.url, "NOT-A-CODE").startswith("Not enrolled: the office hub refused: unknown")
    assert vm.enroll(served.url, served.hub.new_code("Tablet 9", "R. Eng", "reviewer")).startswith(
        "Enrolled as Tablet 9"
    )
    store.create_site(name="From the view model")
    assert vm.sync_now().startswith("Sent ")
    assert "in step" in vm.hub_status()
    assert store.digest() == served.hub.digest()


def test_auto_sync_backs_off_while_unreachable_and_resumes_when_the_network_returns(served, tmp_path):
    store = Store(tmp_path / "t.db")
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        dead = f"http://127.0.0.1:{s.getsockname()[1]}"
    key = new_private_key()
    save_enrolment(store.db, dead, store.device_id, key)
    store.create_site(name="Offline work")
    auto = AutoSync(SyncViewModel(store), base_s=30, max_s=100)
    assert auto.tick(0).startswith("Not synced, your work is safe")
    assert auto.next_at_s == 60
    assert auto.tick(59) is None  # waits, never blocks
    auto.tick(60)
    assert auto.next_at_s == 60 + 100  # doubled, capped at max_s
    assert "changes waiting" in auto.waiting()
    # the office comes back: enrol properly and tell the scheduler the network returned
    from mobile.hub_client import enroll

    enroll(store, served.url, served.hub.new_code("T", "P", "reviewer"))
    auto.network_back(61)
    assert auto.tick(61).startswith("Sent ")
    assert auto.next_at_s == 61 + 30  # reset after success
    assert auto.waiting() == "nothing waiting for the office"
