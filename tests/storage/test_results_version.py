"""Stored results follow the recheck's version, and a member of unknown capacity stores no number.

An app update whose recheck prints something else (core.results.RESULTS_VERSION) must not leave every site
showing statuses from the old recheck: the results are marked stale once when the database is opened.
"""

import pytest

from core.recheck import recheck
from core.results import RESULTS_VERSION
from storage import Store, results
from storage.db import transaction
from tests.core.beams import glulam


def _version(store):
    return store.db.execute("SELECT value FROM meta WHERE key = 'results_version'").fetchone()[0]


def _stale(store):
    return store.db.execute("SELECT count(*) FROM beam_result WHERE input_hash = ''").fetchone()[0]


def test_results_of_another_version_are_recomputed_once(tmp_path, monkeypatch):
    path = tmp_path / "v.db"
    store = Store(path)
    site = store.create_site(name="Yard")
    for i in range(3):
        store.save_beam(site.id, glulam(mark=f"B-{i}"), {"level": "Roof"})
    results.fresh(store.db, site.id)
    assert _stale(store) == 0
    assert _version(store) == str(RESULTS_VERSION)
    store.close()
    assert _stale(Store(path)) == 0  # same version: nothing to redo
    # results written by an app whose recheck printed something else
    older = Store(path)
    older.db.execute("UPDATE meta SET value = ? WHERE key = 'results_version'", [str(RESULTS_VERSION - 1)])
    older.close()
    reopened = Store(path)
    assert _stale(reopened) == 3
    assert _version(reopened) == str(RESULTS_VERSION)
    calls = []
    real = results.row_of
    monkeypatch.setattr(results, "row_of", lambda job: calls.append(job) or real(job))
    results.fresh(reopened.db, site.id)
    assert len(calls) == 3
    assert _stale(reopened) == 0
    assert results.stale_after_new_results_version(reopened.db) is False


def test_a_database_without_a_version_is_taken_as_older(tmp_path):
    path = tmp_path / "old.db"
    store = Store(path)
    site = store.create_site(name="Yard")
    store.save_beam(site.id, glulam(), {"level": "Roof"})
    results.fresh(store.db, site.id)
    store.db.execute("DELETE FROM meta WHERE key = 'results_version'")  # written before versions were kept
    store.close()
    assert _stale(Store(path)) == 1


def test_a_member_of_unknown_capacity_stores_its_bending_region_and_no_number(tmp_path):
    """Bearing without lateral restraint, d/b > 2.5: capacity not established (CSA O86-19 7.5.6.3.1)."""
    store = Store(tmp_path / "n.db")
    site = store.create_site(name="Yard")
    beam = glulam(bearings=[{"lateral": False, "rotation": True, "length_mm": 140}] * 2)
    bid = store.save_beam(site.id, beam, {"level": "Roof"})
    got = results.fresh(store.db, site.id)[bid]
    assert got.status == "not_established"
    assert recheck(beam).shear.utilisation < 1.0  # the number the list used to show
    assert got.utilisation is None
    assert got.governing.startswith("bending ")


def _race(monkeypatch, path, beam_id):
    """While the recheck runs, another connection saves a changed beam (a sync import, the hub, the app)."""
    real, done = results.row_of, []

    def row_of(job):
        if not done:
            other = Store(path)
            other.save_beam(other_site(other), glulam(mark="B-0", d_mm=494), {"level": "Roof"}, beam_id=beam_id)
            other.close()
            done.append(True)
        return real(job)

    monkeypatch.setattr(results, "row_of", row_of)
    return done


def other_site(store):
    return store.db.execute("SELECT id FROM site").fetchone()[0]


def _key_of(store, beam_id):
    return store.db.execute("SELECT input_hash, utilisation FROM beam_result WHERE beam_id = ?", [beam_id]).fetchone()


def test_a_beam_saved_while_its_recheck_ran_keeps_its_stale_mark(tmp_path, monkeypatch):
    """The old recheck must not be stored under the old key over a newer save: the row stays stale."""
    path = tmp_path / "race.db"
    store = Store(path)
    site = store.create_site(name="Yard")
    ids = [store.save_beam(site.id, glulam(mark=f"B-{i}"), {"level": "Roof"}) for i in range(3)]
    done = _race(monkeypatch, path, ids[0])
    results.refresh(store.db, site.id)
    assert done
    assert _key_of(store, ids[0])[0] == ""  # stale: the save came after its record was read
    assert all(_key_of(store, b)[0] for b in ids[1:])
    monkeypatch.undo()
    got = results.fresh(store.db, site.id)
    assert got[ids[0]].utilisation == round(recheck(glulam(d_mm=494)).governing_utilisation, 6)


def test_the_portfolio_keeps_the_stale_mark_of_a_beam_saved_meanwhile(tmp_path, monkeypatch):
    path = tmp_path / "race-all.db"
    store = Store(path)
    site = store.create_site(name="Yard")
    ids = [store.save_beam(site.id, glulam(mark=f"B-{i}"), {"level": "Roof"}) for i in range(3)]
    results.fresh(store.db, site.id)
    _race(monkeypatch, path, ids[0])
    results.recheck_all(store.db, processes=1)
    assert _key_of(store, ids[0])[0] == ""
    assert all(_key_of(store, b)[0] for b in ids[1:])


@pytest.mark.parametrize("same_connection", [True, False])
def test_the_portfolio_keeps_the_stale_mark_of_a_beam_saved_between_its_batches(tmp_path, same_connection):
    """A save between two batches of the portfolio keeps its beam's stale mark, whichever connection made it.

    Through the run's own connection (another thread sharing it) or another one: the later batch holds the
    beam's recheck from its record as it was before the save, which must not overwrite the mark. The portfolio
    stores its rows without reading the records again while nothing else has written (``results.Untouched``);
    this is what ends that.
    """
    path = tmp_path / "between.db"
    store = Store(path)
    site = store.create_site(name="Yard")
    ids = sorted(store.save_beam(site.id, glulam(mark=f"B-{i}"), {"level": "Roof"}) for i in range(4))
    results.fresh(store.db, site.id)
    saved = []

    def save_once(done, _total):
        if done and not saved:  # the first batch is stored; the second part was sent to a worker with it
            writer = store if same_connection else Store(path)
            writer.save_beam(site.id, glulam(mark="B-3", d_mm=494), {"level": "Roof"}, beam_id=ids[-1])
            if writer is not store:
                writer.close()
            saved.append(done)

    results.recheck_all(store.db, processes=2, chunk=2, commit_rows=1, on_progress=save_once)
    assert saved == [2]
    assert _key_of(store, ids[-1])[0] == ""  # stale: rechecked from the record as it was before the save
    assert all(_key_of(store, b)[0] for b in ids[:-1])


def test_a_beam_moved_to_another_site_is_listed_there_at_once(tmp_path):
    """A save (or an import) that moves a beam takes its result row along: the new site lists it, the old not."""
    store = Store(tmp_path / "move.db")
    yard, shed = store.create_site(name="Yard"), store.create_site(name="Shed")
    bid = store.save_beam(yard.id, glulam(mark="M-1"), {"level": "Roof"})
    assert list(results.fresh(store.db, yard.id)) == [bid]
    store.save_beam(shed.id, glulam(mark="M-1"), {"level": "Roof"}, beam_id=bid)
    assert list(results.fresh(store.db, shed.id)) == [bid]
    assert list(results.fresh(store.db, yard.id)) == []
    assert [r[0] for r in results.site_list(store.db, shed.id)] == [bid]


def test_a_save_that_changes_nothing_keeps_the_result_current(tmp_path):
    """Its key (the record's text, the site's bases, the tables) is unchanged, so the result still holds."""
    store = Store(tmp_path / "same.db")
    site = store.create_site(name="Yard")
    bid = store.save_beam(site.id, glulam(mark="M-1"), {"level": "Roof"})
    results.fresh(store.db, site.id)
    key = _key_of(store, bid)[0]
    with transaction(store.db):
        store.db.execute("UPDATE beam SET data = data WHERE id = ?", [bid])
    assert _key_of(store, bid)[0] == key
    store.save_beam(site.id, glulam(mark="M-2"), {"level": "Roof"}, beam_id=bid)
    assert _key_of(store, bid)[0] == ""  # a real change marks it stale
