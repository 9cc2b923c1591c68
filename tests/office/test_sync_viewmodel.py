"""The Sync screen's view model with the office hub: enrol, sync now, automatic sync with backoff."""

import socket

from mobile.viewmodels.sync import AutoSync, SyncViewModel
from storage import Store
from storage.identity import enrolment, new_private_key, save_enrolment


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
    assert auto.waiting().endswith("waiting for the office")
    assert not auto.waiting().startswith("nothing")
    # the office comes back: enrol properly and tell the scheduler the network returned
    from mobile.hub_client import enroll

    enroll(store, served.url, served.hub.new_code("T", "P", "reviewer"))
    auto.network_back(61)
    assert auto.tick(61).startswith("Sent ")
    assert auto.next_at_s == 61 + 30  # reset after success
    assert auto.waiting() == "nothing waiting for the office"


def _wait_for_sync(runner, clock, limit=400):
    """Poll like the app's timer (every 0.05 s of test time) until a sync finishes; bounded."""
    import time

    for _ in range(limit):
        clock[0] += 0.05
        if runner.poll(clock[0]):
            return runner.summary
        time.sleep(0.05)
    msg = f"no sync finished: busy={runner.busy} next_at={runner.auto.next_at_s} now={clock[0]}"
    raise AssertionError(msg)


def test_background_sync_sends_logged_work_without_a_tap_and_never_blocks_the_caller(served, tmp_path):
    from mobile.viewmodels.sync import BackgroundSync

    store = served.tablet(tmp_path / "t.db")
    vm = SyncViewModel(store)
    runner = BackgroundSync(AutoSync(vm, base_s=300, max_s=600, settle_s=1.0))
    clock = [0.0]
    assert _wait_for_sync(runner, clock).startswith("Sent ")  # the first poll after start syncs
    assert vm.waiting() == "nothing waiting for the office"
    store.create_site(name="Logged on site")
    assert vm.waiting() == "1 change waiting for the office"
    runner.poll(clock[0])  # notices the change: due settle_s later, not the periodic 300 s
    assert runner.auto.next_at_s <= clock[0] + 1.0
    assert _wait_for_sync(runner, clock).startswith("Sent 1 changes")
    assert store.digest() == served.hub.digest()
    assert vm.waiting() == "nothing waiting for the office"
    runner.stop()


def test_background_sync_probes_while_the_hub_is_down_and_syncs_when_it_answers(served, tmp_path):
    from mobile.viewmodels.sync import BackgroundSync

    store = served.tablet(tmp_path / "t.db")
    vm = SyncViewModel(store)
    real_url = vm.hub_url()
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        dead = f"http://127.0.0.1:{s.getsockname()[1]}"
    auth = enrolment(store.db)
    save_enrolment(store.db, dead, auth.device_id, auth.key, auth.ca_pem)  # the network is gone
    assert vm.hub_url() == dead
    runner = BackgroundSync(AutoSync(vm, base_s=300, max_s=600), probe_s=0.5)
    clock = [0.0]
    assert _wait_for_sync(runner, clock).startswith("Not synced, your work is safe")
    assert runner.auto.failing
    assert runner.auto.next_at_s >= clock[0] + 500  # backed off far beyond the test's time
    store.create_site(name="Offline work")
    save_enrolment(store.db, real_url, auth.device_id, auth.key, auth.ca_pem)  # the network returns
    assert _wait_for_sync(runner, clock).startswith("Sent ")  # the probe found the hub: no 600 s wait
    assert not runner.auto.failing
    assert store.digest() == served.hub.digest()
    runner.stop()


def test_clock_warning_names_changes_stamped_far_ahead(tmp_path):
    """sync.md 3.3: stamps more than 10 minutes ahead are accepted and flagged, never dropped."""
    from storage.bundle import export_bundle

    day_ms, key = 86_400_000, "ab" * 32
    ahead = Store(tmp_path / "ahead.db", firm_key=key, wall_clock_ms=lambda: 1_800_000_000_000 + 3 * day_ms)
    ahead.create_site(name="Stamped three days ahead")
    here = Store(tmp_path / "here.db", firm_key=key, wall_clock_ms=lambda: 1_800_000_000_000)
    vm = SyncViewModel(here)
    assert vm.clock_warning() == ""
    export_bundle(ahead, tmp_path / "b.bwsync", peer="here")
    summary = vm.import_file(tmp_path / "b.bwsync")
    assert "Warning: clock" in summary, summary
    assert "3.0 days ahead" in vm.clock_warning(), vm.clock_warning()
