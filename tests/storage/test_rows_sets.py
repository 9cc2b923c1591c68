"""The table rows a stored result used are kept once per distinct set (``rows_set``, migration 9).

What is checked: every path that stores results (the site refresh, the portfolio recheck in one or two
processes) reads back the rows the recheck used, exactly as before (``core.results.rows_used`` of the
traced recheck: the rows a notice lists); identical sets are stored once; a set no result names any more
is removed by the next portfolio recheck; and a result naming a set that is not there is an error, never an
empty list of rows (nothing is dropped silently).
"""

from __future__ import annotations

import pytest

from core.recheck import recheck
from core.results import rows_used
from storage import Store, results
from storage.db import transaction
from tests.core.beams import glulam


def _yard(store: Store, depths: list[int]) -> tuple[str, list[str]]:
    site = store.create_site(name="Yard")
    return site.id, [store.save_beam(site.id, glulam(mark=f"B-{i}", d_mm=d)) for i, d in enumerate(depths)]


def _expected_rows(depth: int) -> set[tuple[str, str, str]]:
    """The rows the traced recheck of the same beam names (what a notice lists)."""
    traced = recheck(glulam(mark="X", d_mm=depth))
    return {(clause, source, status.value) for clause, source, status in rows_used(traced)}


def _as_set(stored: results.StoredResult) -> set[tuple[str, str, str]]:
    return {(r["clause"], r["source"], r["status"]) for r in stored.rows_used}


def _sets(store: Store) -> int:
    return int(store.db.execute("SELECT count(*) FROM rows_set").fetchone()[0])


@pytest.mark.parametrize("processes", [0, 1, 2])
def test_each_distinct_set_is_stored_once_and_read_back_whole(tmp_path, processes):
    """Six beams of two depths (a shallow one takes other rows: KL regime, KZbg) store at most two sets.

    processes 0: the site screen's refresh; 1 and 2: the portfolio recheck.
    """
    store = Store(tmp_path / "s.db")
    depths = [456, 456, 456, 190, 190, 456]
    site_id, ids = _yard(store, depths)
    if processes:
        results.recheck_all(store.db, processes=processes, chunk=2)
    else:
        results.refresh(store.db, site_id)
    got = results.stored(store.db, site_id)
    for bid, depth in zip(ids, depths, strict=True):
        assert _as_set(got[bid]) == _expected_rows(depth), bid
    distinct = {frozenset(_expected_rows(d)) for d in set(depths)}
    assert _sets(store) == len(distinct)
    texts = [r[0] for r in store.db.execute("SELECT rows_used FROM beam_result")]
    assert set(texts) == {"[]"}  # the text is not kept in each row any more


def test_a_set_no_result_names_is_removed_by_the_next_portfolio_recheck(tmp_path):
    store = Store(tmp_path / "p.db")
    _, ids = _yard(store, [190, 456])
    results.recheck_all(store.db, processes=1)
    before = {r[0] for r in store.db.execute("SELECT rows FROM rows_set")}
    store.update_beam(ids[0], {"d_mm": 456})  # now both beams use the deep beam's rows
    results.recheck_all(store.db, processes=1)
    after = {r[0] for r in store.db.execute("SELECT rows FROM rows_set")}
    assert len(before) == 2
    assert len(after) == 1
    assert after < before
    named = store.db.execute("SELECT DISTINCT rows_id FROM beam_result").fetchall()
    assert len(named) == 1


def test_a_result_naming_a_missing_set_is_an_error_not_an_empty_list(tmp_path):
    store = Store(tmp_path / "m.db")
    site_id, ids = _yard(store, [456])
    results.refresh(store.db, site_id)
    with transaction(store.db):
        store.db.execute("DELETE FROM rows_set")
    with pytest.raises(ValueError, match=f"stored result of beam {ids[0]} names a set of table rows"):
        results.stored(store.db, site_id)


def test_a_new_beam_placeholder_has_no_rows(tmp_path):
    """A beam's placeholder row (status pending, from the insert trigger) names no set: no rows."""
    store = Store(tmp_path / "n.db")
    _, ids = _yard(store, [456])
    row = store.db.execute("SELECT status, rows_id, rows_used FROM beam_result WHERE beam_id = ?", ids).fetchone()
    assert tuple(row) == ("pending", None, "[]")
    assert results.stored_rows(store.db)[ids[0]][7] == "[]"


def test_migration_9_runs_twice_without_harm(tmp_path):
    """Each migration statement is idempotent (storage.db.migrate): the added column is skipped when there."""
    store = Store(tmp_path / "twice.db")
    site_id, ids = _yard(store, [456])
    results.refresh(store.db, site_id)
    kept = results.stored_rows(store.db)
    store.db.execute("PRAGMA user_version = 8")
    store.close()
    again = Store(tmp_path / "twice.db")
    assert again.db.execute("PRAGMA user_version").fetchone()[0] == 9
    assert results.stored_rows(again.db) == kept
    assert kept[ids[0]][7] != "[]"
