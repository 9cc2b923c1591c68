"""Stored recheck results: kept with the record, refreshed when what they depend on changes; the portfolio recheck."""

import json

import pytest

from core.recheck import recheck
from mobile.cli import main
from storage import Store, results
from tests.core.beams import glulam


@pytest.fixture
def store(tmp_path):
    return Store(tmp_path / "r.db")


def _site(store, n=3):
    site = store.create_site(name="Yard")
    ids = [store.save_beam(site.id, glulam(mark=f"B-{i}"), {"level": "Roof"}) for i in range(n)]
    return site, ids


def test_fresh_stores_the_recheck_and_reuses_it(store, monkeypatch):
    site, ids = _site(store)
    got = results.fresh(store.db, site.id)
    expect = recheck(glulam())
    assert {r.status for r in got.values()} == {expect.status.value}
    assert got[ids[0]].utilisation == pytest.approx(expect.governing_utilisation, abs=1e-6)
    assert got[ids[0]].finding_codes == [f.code for f in expect.findings]
    # every table row the recheck used is recorded with its status
    assert got[ids[0]].rows_used
    assert {r["status"] for r in got[ids[0]].rows_used} <= {"verified", "confirmed", "memory"}
    calls = []
    monkeypatch.setattr(results, "row_of", lambda job: calls.append(job))
    assert results.fresh(store.db, site.id) == got
    assert calls == []  # nothing stale: nothing rechecked


def test_a_changed_beam_is_rechecked_the_others_not(store, monkeypatch):
    site, ids = _site(store)
    results.fresh(store.db, site.id)
    store.update_beam(ids[1], {"d_mm": 190})  # a far shallower member than logged
    seen = []
    real = results.row_of
    monkeypatch.setattr(results, "row_of", lambda job: seen.append(job[0]) or real(job))
    got = results.fresh(store.db, site.id)
    assert seen == [ids[1]]
    assert got[ids[1]].status == recheck(glulam(d_mm=190)).status.value != got[ids[0]].status


def test_site_design_basis_change_makes_its_results_stale(store):
    site, _ = _site(store)
    results.fresh(store.db, site.id)
    assert list(results.jobs(store.db, site.id)) == []
    store.save("site", site.id, {"design_basis": {"snow_kpa": 3.5}})
    assert len(list(results.jobs(store.db, site.id))) == 3


def test_incomplete_beam_is_unchecked(store):
    site = store.create_site(name="Yard")
    bid = "0190aaaa-0000-7000-8000-000000000001"
    store.save("beam", bid, {"mark": "NEW-1", "site_id": site.id, "material": "glulam"})
    assert results.fresh(store.db, site.id)[bid].status == results.UNCHECKED


def test_two_processes_give_the_same_results_as_one(store):
    _, _ = _site(store, n=7)
    first = results.recheck_all(store.db, processes=1, chunk=2)
    one = results.stored(store.db)
    store.db.execute("DELETE FROM beam_result")
    second = results.recheck_all(store.db, processes=2, chunk=2, commit_rows=3)
    assert results.stored(store.db) == one
    assert len(one) == first.rechecked == second.rechecked == 7
    assert {a.beam_id: a for _, a in first.moved} == {a.beam_id: a for _, a in second.moved}
    assert {a.beam_id: (a.status, a.governing, a.utilisation) for _, a in first.moved} == {
        k: (r.status, r.governing, r.utilisation) for k, r in one.items()
    }
    assert results.recheck_all(store.db, processes=2, chunk=2).moved == []  # nothing moved: nothing kept


def test_recheck_command_lists_changes_then_nothing(tmp_path, capsys):
    db = tmp_path / "p.db"
    store = Store(db)
    _, ids = _site(store)
    assert main(["recheck", "--db", str(db)]) == 0
    out, err = capsys.readouterr()
    assert len(out.splitlines()) == 3 + 2  # the beams, the counts, the caution
    assert "no stored result" in out  # first run: every beam is new
    assert "3 / 3 beams" in err  # the progress
    assert main(["recheck", "--db", str(db), "--site", "Yard", "--quiet"]) == 0
    assert capsys.readouterr().out.startswith("rechecked 3 beams; 0 changed")
    store.db.execute("UPDATE beam_result SET status='deficient', governing='shear' WHERE beam_id=?", [ids[2]])
    assert main(["recheck", "--db", str(db), "--quiet"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("Yard  ·  B-2")
    assert "deficient (shear) ->" in out
    assert main(["recheck", "--db", str(db), "--site", "nowhere"]) == 2


def test_an_imported_edit_makes_the_result_stale(tmp_path):
    from storage.bundle import export_bundle, import_bundle

    a, b = Store(tmp_path / "a.db", firm_key="k"), Store(tmp_path / "b.db", firm_key="k")
    site, ids = _site(a, n=2)
    export_bundle(a, tmp_path / "1.zip")
    assert import_bundle(b, tmp_path / "1.zip").outcome == "applied"
    results.fresh(b.db, site.id)
    assert list(results.jobs(b.db, site.id)) == []
    a.update_beam(ids[0], {"d_mm": 190})
    export_bundle(a, tmp_path / "2.zip", peer=None)
    assert import_bundle(b, tmp_path / "2.zip").outcome == "applied"
    assert [j[0] for j in results.jobs(b.db, site.id)] == [ids[0]]  # the trigger marked it, whoever wrote
    assert results.fresh(b.db, site.id)[ids[0]].status == recheck(glulam(d_mm=190)).status.value


def test_site_list_reads_the_list_fields_stored_beside_each_result(store):
    site = store.create_site(name="Yard")
    a = store.save_beam(site.id, glulam(mark="RB-2"), {"level": "Roof", "gridline": "C/3"})
    b = store.save_beam(site.id, glulam(mark="FB-1"), {"level": "L2", "gridline": "A/1"})
    c = store.save_beam(site.id, glulam(mark="RB-1"), {"level": "Roof", "gridline": "C/3"})
    d = store.save_beam(site.id, glulam(mark="X-9"))  # no level or gridline recorded
    assert results.stored(store.db, site.id) == {}  # a new beam's placeholder row is no stored result
    results.refresh(store.db, site.id)
    rows = results.site_list(store.db, site.id)
    assert [r[0] for r in rows] == [d, b, c, a]  # by level, gridline, mark ('' first, as before)
    assert rows[0][1] == {"mark": "X-9"}  # a field not recorded is absent
    assert rows[3][1] == {"mark": "RB-2", "level": "Roof", "gridline": "C/3"}
    store.update_beam(a, {"mark": "RB-3", "level": "L2"})  # a renamed and moved beam: listed anew
    store.update_beam(b, {"archived": True})
    results.refresh(store.db, site.id)
    rows = results.site_list(store.db, site.id)
    assert [(r[0], r[1]["mark"]) for r in rows] == [(d, "X-9"), (a, "RB-3"), (c, "RB-1")]
    e = store.save_beam(site.id, glulam(mark="RB-0"), {"level": "Roof", "gridline": "C/3"})  # logged later
    assert e in [j[0] for j in results.jobs(store.db, site.id)]
    results.refresh(store.db, site.id)
    assert [r[1]["mark"] for r in results.site_list(store.db, site.id)] == ["X-9", "RB-3", "RB-0", "RB-1"]


OLD_ROWS = json.dumps([{"clause": "CSA O86-19 Table 7.3", "source": "row D.Fir-L 24f-E (stored)", "status": "memory"}])


def test_a_database_from_before_the_list_fields_is_migrated_and_lists_its_beams(tmp_path, monkeypatch):
    from storage import db as db_module

    path = tmp_path / "old.db"
    old_migrations = {k: v for k, v in db_module.MIGRATIONS.items() if k < 4}
    with monkeypatch.context() as m:
        m.setattr(db_module, "MIGRATIONS", old_migrations)
        old = Store(path)
        site, ids = _site(old)
        # the old site open: a stored result per beam as the app of schema 3 wrote it (no list fields, its
        # table rows' text in each row)
        for bid in ids:
            old.db.execute(
                "INSERT INTO beam_result (beam_id, site_id, input_hash, status, governing, utilisation, findings, "
                "rows_used) VALUES (?, ?, 'old-key', 'ok', 'shear', 0.5, '[]', ?)",
                [bid, site.id, OLD_ROWS if bid != ids[2] else "[]"],
            )
        assert old.db.execute("PRAGMA user_version").fetchone()[0] == 3
        old.close()
    store = Store(path)  # migrations 4 (list fields) and 5 (device identity) run
    assert store.db.execute("PRAGMA user_version").fetchone()[0] == max(db_module.MIGRATIONS)
    # migration 9: the rows' text kept once, in rows_set, and read back as it was
    assert store.db.execute("SELECT rows FROM rows_set").fetchall() == [(OLD_ROWS,)]
    assert {r[0] for r in store.db.execute("SELECT rows_used FROM beam_result")} == {"[]"}
    kept = results.stored(store.db, site.id)
    assert [kept[b].rows_used for b in ids] == [tuple(json.loads(OLD_ROWS))] * 2 + [()]
    assert len(list(results.jobs(store.db, site.id))) == 3  # every result recomputed once to fill the fields
    results.refresh(store.db, site.id)
    assert [(r[0], r[1]["mark"], r[1]["level"]) for r in results.site_list(store.db, site.id)] == [
        (ids[0], "B-0", "Roof"),
        (ids[1], "B-1", "Roof"),
        (ids[2], "B-2", "Roof"),
    ]


def test_unraised_lists_only_findings_without_a_deficiency(store):
    from mobile.viewmodels.site import SiteViewModel

    site = store.create_site(name="Yard")
    weak = store.save_beam(site.id, glulam(mark="W-1", d_mm=190))  # far too shallow for the line load
    store.save_beam(site.id, glulam(mark="OK-1"))
    vm = SiteViewModel(store, site.id)
    expect = recheck(glulam(mark="W-1", d_mm=190))
    n = len(expect.findings)
    assert n >= 1
    assert vm.unraised() == [f"W-1 ({n} finding{'s' if n > 1 else ''})"]
    for f in expect.findings:
        store.raise_deficiency(
            site.id, weak, f.code, f.priority.value, f"Grid A {f.region or ''}".strip(), f.message, f.clause, f.action
        )
    assert vm.unraised() == []


def test_portfolio_rows_are_exactly_the_stored_results_rows(tmp_path):
    """The portfolio's row path (shared JSON, no StoredResult) stores what the site screen's path stores."""
    from mobile.demo.run import load_demo

    store = Store(tmp_path / "demo.db")
    site_id = load_demo(store)  # every kind the demo covers: ok, deficient, not permitted, not established
    bid = "0190aaaa-0000-7000-8000-000000000002"
    store.save("beam", bid, {"mark": "NEW-1", "site_id": site_id, "material": "glulam"})  # unchecked
    gone = store.save_beam(site_id, glulam(mark="OLD-1"))
    store.update_beam(gone, {"archived": True})
    todo = list(results.jobs(store.db, None, only_stale=False)) + [j for j in results.jobs(store.db) if j[0] == gone]
    assert len(todo) >= 15
    statuses = set()
    for job in todo:
        row = results.row_of(job)
        assert row == results.as_row(results.compute(job)), job[0]
        statuses.add(row[3])
    assert statuses == {"ok", "deficient", "not_established", "not_permitted", "unchecked"}


def test_a_result_is_built_from_the_record_text_as_the_record_reads(store):
    """Validated from the stored text (other keys ignored), list fields as the record's own JSON values.

    Expected values: the recheck of the same beam validated through ``Beam`` (its model, contract 1);
    the list fields as Python's ``str`` of each JSON value (a number, a boolean: drafts are free JSON).
    """
    import json

    site = store.create_site(name="Yard")
    bid = store.save_beam(site.id, glulam(mark="T-1"), {"level": 3, "gridline": 2.50, "note": {"a": [1]}})
    odd = store.save_beam(site.id, glulam(mark="T-2"), {"level": True, "gridline": None})
    rows = {j[0]: results.row_of(j) for j in results.jobs(store.db, site.id)}
    expect = recheck(glulam(mark="T-1"))
    assert rows[bid][3] == expect.status.value
    assert rows[bid][5] == round(expect.governing_utilisation, 6)
    assert [f["code"] for f in json.loads(rows[bid][6])] == [f.code for f in expect.findings]
    assert rows[bid][8:] == ("T-1", "3", "2.5", 0)
    assert rows[odd][8:] == ("T-2", "True", "", 0)
    # a row's stored JSON is what json.dumps writes for the same objects
    assert rows[bid][7] == json.dumps(json.loads(rows[bid][7]))


def test_stale_count_is_what_a_refresh_rechecks(store):
    """The site screen says "Rechecking N beams" with this count before the work: N must be what refresh does."""
    site, _ = _site(store, n=4)
    other, _ = _site(store, n=2)
    assert results.stale_count(store.db, site.id) == 4  # a new beam's result starts stale
    assert results.refresh(store.db, site.id) == 4
    assert results.stale_count(store.db, site.id) == 0
    assert results.stale_count(store.db, other.id) == 2  # another site's are its own
    store.save("site", site.id, {"design_basis": {"snow_kpa": 3.5}})  # a basis change: every result of the site
    assert results.stale_count(store.db, site.id) == 4
    assert results.refresh(store.db, site.id) == 4


def test_refresh_in_parts_stores_each_part_before_going_on_and_a_stop_keeps_them(store, tmp_path):
    """Each part of ``refresh_parts`` is stored in its own transaction before it is yielded; a stop keeps them.

    The site screen's background recheck reads them through its own connection; what is not done stays stale.

    Results checked against ``core.recheck.recheck`` of the same member (the engineering's own tests check that).
    """
    site, _ = _site(store, n=7)
    reader = Store(tmp_path / "r.db")  # another connection, as the screen's is to the worker's
    parts = results.refresh_parts(store.db, site.id, part=3)
    assert next(parts) == (3, 7)
    assert results.stale_count(reader.db, site.id) == 4
    assert next(parts) == (6, 7)
    parts.close()  # the reviewer left: the worker stops after the part under way
    assert results.stale_count(reader.db, site.id) == 1
    assert list(results.refresh_parts(store.db, site.id, part=3)) == [(1, 1)]  # only what was left
    got = results.stored(reader.db, site.id)
    expect = recheck(glulam())
    assert {r.status for r in got.values()} == {expect.status.value}
    assert {round(r.utilisation, 6) for r in got.values()} == {round(float(expect.governing_utilisation), 6)}
    assert list(results.refresh_parts(store.db, site.id, part=3)) == []  # nothing stale: nothing to yield
    with pytest.raises(ValueError, match="part must be at least 1"):
        next(results.refresh_parts(store.db, site.id, part=0))


POOL_UNDER_A_C_HANDLER = """
import ctypes, signal
ctypes.CDLL(None).signal(signal.SIGTERM, ctypes.CFUNCTYPE(None, ctypes.c_int)(lambda s: None))
from storage.results import _workers
for _ in range(200):
    with _workers(2) as pool:
        pool.map(abs, range(10))
print("ended")
"""


def test_the_portfolio_pool_ends_in_a_process_that_catches_sigterm():
    """A worker pool ends although the parent catches SIGTERM in C, as a process with an SDL window does.

    ``Pool.terminate`` ends workers still waiting on the task queue with SIGTERM; they inherited SDL's
    handler, which only posts a quit event, so the end of a portfolio recheck run in such a process
    waited for ever (it hung the test process once the tablet screens had run). Python's documentation
    on ``multiprocessing.Pool.terminate``: stops the worker processes immediately.
    """
    import subprocess
    import sys
    from pathlib import Path

    root = Path(__file__).resolve().parents[2]
    done = subprocess.run(
        [sys.executable, "-c", POOL_UNDER_A_C_HANDLER], cwd=root, capture_output=True, text=True, timeout=120
    )
    assert done.stdout.strip() == "ended", done.stderr[-800:]
