"""A firm verifies or corrects a table row: a synced record the lookups honour; `tables impact` lists what changes."""

import pytest

from core import tables
from core.recheck import recheck
from mobile.cli import main
from storage import Store, firm_tables, results
from storage.bundle import export_bundle, import_bundle
from storage.stamps import utc_stamp
from tests.core.beams import glulam

KEY = "test-firm-key"


@pytest.fixture(autouse=True)
def published_tables():
    """Every test leaves the process on the published tables (the firm records are process-wide)."""
    yield
    tables.use_firm_records([])


def _decked(**over):
    """A glulam beam under fastened decking: the compression edge is held, KL = 1."""
    return glulam(top_edge={"braced_by": "decking", "fastened": True}, **over)


def test_verify_is_a_synced_record_and_the_row_reads_verified(tmp_path, capsys):
    db = tmp_path / "a.db"
    Store(db, firm_key=KEY).close()
    verify = ["tables", "verify", "--db", str(db), "glulam_grades", "D.Fir-L/24f-E", "--by", "R. Osei"]
    code = main([*verify, "--edition", "O86-19", "--page", "112"])
    assert code == 0
    assert "verified by R. Osei" in capsys.readouterr().out
    assert main(["tables", "list", "--db", str(db)]) == 0
    line = next(x for x in capsys.readouterr().out.splitlines() if x.startswith("glulam_grades\tD.Fir-L/24f-E\t"))
    assert "\tverified\t" in line
    assert "R. Osei" in line
    assert "p. 112" in line
    a = Store(db, firm_key=KEY)
    assert a.db.execute("SELECT count(*) FROM op WHERE entity='table_row'").fetchone()[0] == 1
    # the record reaches another device through the ordinary bundle
    export_bundle(a, tmp_path / "a.zip")
    b = Store(tmp_path / "b.db", firm_key=KEY)
    assert import_bundle(b, tmp_path / "a.zip").outcome == "applied"
    row = dict(((t, label), st) for t, label, st, _ in firm_tables.listing(b.db))
    assert row[("glulam_grades", "D.Fir-L/24f-E")] == "verified"
    # a recheck's stored result names the rows it used, with the firm's status
    site = b.create_site(name="Yard")
    bid = b.save_beam(site.id, _decked())
    used = results.fresh(b.db, site.id)[bid].rows_used
    assert any("24f-E" in r["source"] and r["status"] == "verified" for r in used), used


def test_refused_verifications_name_the_problem(tmp_path, capsys):
    db = tmp_path / "a.db"
    Store(db).close()
    base = ["tables", "verify", "--db", str(db), "--by", "R. Osei", "--page", "112"]
    assert main([*base, "--edition", "O86-19", "glulam_grades", "D.Fir-L/99f-Z"]) == 2
    assert "no row 'D.Fir-L/99f-Z'" in capsys.readouterr().err
    assert main([*base, "--edition", "O86-19", "no_such_table", "x"]) == 2
    assert "no table 'no_such_table'" in capsys.readouterr().err
    assert main([*base, "--edition", "O86-14", "glulam_grades", "D.Fir-L/24f-E"]) == 2
    assert "edition" in capsys.readouterr().err
    assert main([*base, "--edition", "O86-19", "glulam_grades", "D.Fir-L/24f-E", "--column", "fb_pos_mpa",
                 "--value", "15.3"]) == 2  # fmt: skip
    assert "source" in capsys.readouterr().err


def test_a_correction_changes_the_results_and_impact_lists_beams_and_notices(tmp_path, capsys):
    db = tmp_path / "a.db"
    store = Store(db)
    site = store.create_site(name="Yard", project_number="P-7")
    bid = store.save_beam(site.id, _decked(mark="RB-1"), {"level": "Roof"})
    other = store.save_beam(site.id, glulam(mark="J-1", grade="20f-E"), {"level": "Roof"})
    before = recheck(_decked()).bending[0].utilisation
    d = store.raise_deficiency(site.id, bid, "bending_overstress", "immediate", "Roof RB-1", "x", "ref", "act")
    store.issue_notice(site.id, "P-7-FR-1", b"%PDF-1.4 stand-in", [d.id], "R. Osei", utc_stamp())
    assert main(["recheck", "--db", str(db), "--quiet"]) == 0
    capsys.readouterr()
    store.close()
    assert main(["tables", "verify", "--db", str(db), "glulam_grades", "D.Fir-L/24f-E", "--by", "R. Osei",
                 "--edition", "O86-19", "--page", "112", "--column", "fb_pos_mpa", "--value", "15.3",
                 "--source", "firm's check of its copy (a test value: half the published fb)"]) == 0  # fmt: skip
    after = recheck(_decked()).bending[0].utilisation
    # Mr = phi Fb S KX KZbg with KL = 1 (CSA O86-19 7.5.6.5.1): Mr is proportional to Fb, so halving fb
    # (30.6 -> 15.3 MPa, 24f-E D.Fir-L Fb from memory) doubles the bending utilisation
    assert after == pytest.approx(2 * before, rel=1e-3)
    capsys.readouterr()
    assert main(["tables", "impact", "--db", str(db)]) == 0
    out = capsys.readouterr().out
    assert "beam Yard  ·  RB-1  ·  grid not recorded  ·  level Roof  [" in out  # the site as well as the mark
    assert "notice P-7-FR-1 rev 0" in out
    assert ", Yard: cites beams RB-1 (grid not recorded)" in out  # which site's RB-1, and where on it
    assert "J-1" not in out  # a 20f-E beam does not use the corrected row
    assert other


def test_a_table_record_makes_stored_results_stale(tmp_path):
    store = Store(tmp_path / "a.db")
    site = store.create_site(name="Yard")
    store.save_beam(site.id, _decked())
    results.fresh(store.db, site.id)
    assert list(results.jobs(store.db, site.id)) == []
    firm_tables.record(store, "effective_length", "any", "R. Osei", "O86-19", 70)
    assert len(list(results.jobs(store.db, site.id))) == 1


def test_row_labels_are_unique_in_every_table():
    from core.overrides import KEYS, row_label

    for name in KEYS:
        labels = [row_label(name, r) for r in tables.load(name).rows]
        assert len(labels) == len(set(labels)), name


def test_portfolio_workers_use_the_firms_corrected_row(tmp_path):
    store = Store(tmp_path / "w.db")
    site = store.create_site(name="Yard")
    ids = [store.save_beam(site.id, _decked(mark=f"RB-{i}"), {"level": "Roof"}) for i in range(4)]
    before = recheck(_decked()).bending[0].utilisation
    firm_tables.record(store, "glulam_grades", "D.Fir-L/24f-E", "R. Osei", "O86-19", 112, "fb_pos_mpa", "15.3",
                       "firm's check of its copy (a test value: half the published fb)")  # fmt: skip
    tables.use_firm_records([])  # this process forgets them: recheck_all must hand them to its workers
    run = results.recheck_all(store.db, processes=2, chunk=1)  # one beam a task: the workers do the work
    assert run.rechecked == 4
    got = results.stored(store.db)
    # Mr is proportional to Fb with KL = 1 (CSA O86-19 7.5.6.5.1): half the fb, twice the utilisation
    for bid in ids:
        assert got[bid].utilisation == pytest.approx(2 * before, rel=1e-3)
    tables.use_firm_records([])
