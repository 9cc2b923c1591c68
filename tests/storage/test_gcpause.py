"""``storage.gcpause``: bulk operations pause automatic cyclic collection and restore it exactly.

Outside source: the Python documentation of the ``gc`` module (docs.python.org/3/library/gc.html):
``isenabled()`` reports whether automatic collection is on, ``disable()``/``enable()`` switch it,
``get_threshold()``/``set_threshold()`` read and set the three generation thresholds.
"""

import gc
import threading

import pytest

from mobile.viewmodels.site import SiteViewModel
from storage import Store, results
from storage.bundle import export_bundle, import_bundle
from storage.gcpause import gc_paused, pauses_running
from tests.core.beams import glulam


@pytest.fixture(autouse=True)
def gc_state():
    """Each test starts with the collector on at the interpreter's thresholds, and leaves it so."""
    enabled, thresholds = gc.isenabled(), gc.get_threshold()
    gc.enable()
    yield
    gc.set_threshold(*thresholds)
    (gc.enable if enabled else gc.disable)()
    assert pauses_running() == 0


def test_paused_inside_and_enabled_after():
    with gc_paused():
        assert not gc.isenabled()
        assert pauses_running() == 1
    assert gc.isenabled()


def test_off_before_stays_off_after():
    gc.disable()
    with gc_paused():
        assert not gc.isenabled()
    assert not gc.isenabled()


def test_thresholds_restored_even_if_changed_inside():
    before = gc.get_threshold()
    with gc_paused():
        gc.set_threshold(5, 3, 2)
    assert gc.get_threshold() == before
    assert gc.isenabled()


def test_restored_on_an_exception_which_still_propagates():
    before = gc.get_threshold()
    msg = "bulk failed"
    with pytest.raises(KeyError, match=msg), gc_paused():
        raise KeyError(msg)
    assert gc.isenabled()
    assert gc.get_threshold() == before
    gc.disable()
    with pytest.raises(RuntimeError), gc_paused():
        raise RuntimeError
    assert not gc.isenabled()  # off before the failing pause: still off


def test_nested_pause_does_not_reenable_under_the_outer_one():
    with gc_paused():
        with gc_paused():
            assert pauses_running() == 2
        assert not gc.isenabled()  # the inner one ended; the outer one still runs
    assert gc.isenabled()


def test_overlapping_pauses_in_two_threads_restore_once_both_end():
    """A enters, B enters, A leaves first (not nested): off until B leaves, then on again."""
    a_in, b_in, a_out = threading.Event(), threading.Event(), threading.Event()
    seen: dict[str, bool] = {}

    def a() -> None:
        with gc_paused():
            a_in.set()
            b_in.wait(5)
        a_out.set()

    def b() -> None:
        a_in.wait(5)
        with gc_paused():
            b_in.set()
            a_out.wait(5)
            seen["after A left, inside B"] = gc.isenabled()

    threads = [threading.Thread(target=a), threading.Thread(target=b)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(10)
    assert seen == {"after A left, inside B": False}
    assert gc.isenabled()


def _site(store, n=3):
    site = store.create_site(name="Yard")
    for i in range(n):
        store.save_beam(site.id, glulam(mark=f"B-{i}"), {"level": "Roof"})
    return site


def test_bundle_import_runs_paused(tmp_path):
    a, b = Store(tmp_path / "a.db"), Store(tmp_path / "b.db")
    _site(a)
    export_bundle(a, tmp_path / "a.zip")
    seen = []
    report = import_bundle(b, tmp_path / "a.zip", progress=lambda _f, _what: seen.append(gc.isenabled()))
    assert report.outcome == "applied", report
    assert seen
    assert not any(seen)
    assert gc.isenabled()
    assert b.digest() == a.digest()


@pytest.mark.parametrize("processes", [1, 2])
def test_portfolio_recheck_runs_paused(tmp_path, processes):
    store = Store(tmp_path / "p.db")
    _site(store, n=4)
    seen = []
    progress = lambda *_: seen.append(gc.isenabled())  # noqa: E731
    run = results.recheck_all(store.db, processes=processes, chunk=2, on_progress=progress)
    assert run.rechecked == 4
    assert seen
    assert not any(seen)
    assert gc.isenabled()


def test_site_open_reads_its_rows_paused(tmp_path, monkeypatch):
    store = Store(tmp_path / "s.db")
    site = _site(store)
    seen = []
    real = results.site_list
    monkeypatch.setattr(results, "site_list", lambda *a: seen.append(gc.isenabled()) or real(*a))
    rows = SiteViewModel(store, site.id).beam_rows()
    assert [r[1]["mark"] for r in rows] == ["B-0", "B-1", "B-2"]
    assert seen == [False]
    assert gc.isenabled()
