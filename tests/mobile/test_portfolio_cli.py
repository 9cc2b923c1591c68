"""`bracewalk recheck` as a reviewer reads it: which beam on which site changed, honest counts, the caution.

Found in the session-25 review: the changed lines named only the mark (every site has an RB-1), the
counts left out the archived beams, the caution was missing, and a progress bar written to a file was one
line of carriage returns.
"""

import io

import pytest

from core.recheck import recheck
from core.results import CAUTION
from mobile import portfolio
from mobile.cli import main
from storage import Store, results
from tests.storage.test_firm_tables import _decked, published_tables  # noqa: F401  (autouse: it applies here too)

CORRECTION = ["--by", "R. Osei", "--edition", "O86-19", "--page", "112", "--column", "fb_pos_mpa", "--value",
              "15.3", "--source", "firm's check of its copy (a test value: half the published fb)"]  # fmt: skip


LIGHT = {"dead_kn_m": 0.6, "live_kn_m": 0.0, "snow_kn_m": 1.5}  # 0.3 x glulam()'s loads


def _two_sites(db):
    """Two sites that each have an RB-1 (marks repeat from site to site: common practice), one archived beam."""
    store = Store(db)
    north = store.create_site(name="North Depot")
    south = store.create_site(name="South Arena")
    store.save_beam(south.id, _decked(mark="RB-1"), {"level": "Roof", "gridline": "C / 2-3"})
    store.save_beam(north.id, _decked(mark="RB-1"), {"level": "Roof", "gridline": "A / 1-2"})
    store.save_beam(north.id, _decked(mark="RB-2", loads=LIGHT), {"level": "Roof", "gridline": "B / 1-2"})
    gone = store.save_beam(north.id, _decked(mark="RB-9"), {"level": "Roof", "gridline": "D / 1-2"})
    store.update_beam(gone, {"archived": True})
    store.close()


def _stored(db, mark):
    """The stored result of the beam marked ``mark`` (the only one so marked)."""
    store = Store(db)
    try:
        ((bid,),) = store.db.execute("SELECT id FROM beam WHERE json_extract(data, '$.mark') = ?", [mark]).fetchall()
        return results.stored(store.db)[bid]
    finally:
        store.close()


def test_a_table_correction_names_each_changed_beam_with_its_site_and_place(tmp_path, capsys):
    db = tmp_path / "p.db"
    _two_sites(db)
    assert main(["recheck", "--db", str(db), "--quiet"]) == 0
    capsys.readouterr()
    before = recheck(_decked()).governing_utilisation
    light_before = _stored(db, "RB-2")
    assert main(["tables", "verify", "--db", str(db), "glulam_grades", "D.Fir-L/24f-E", *CORRECTION]) == 0
    capsys.readouterr()
    assert main(["recheck", "--db", str(db), "--quiet"]) == 0
    out = capsys.readouterr().out.splitlines()
    assert before is not None
    # Mr = phi Fb S KX KZbg with KL = 1 (CSA O86-19 7.5.6.5.1): halving fb doubles the bending utilisation
    now = f"utilisation {before:.2f} -> {2 * before:.2f}"
    assert out[0].startswith("North Depot  ·  RB-1  ·  grid A / 1-2  ·  level Roof  ["), out
    assert out[1].startswith("South Arena  ·  RB-1  ·  grid C / 2-3  ·  level Roof  ["), out
    for line in out[:2]:
        assert ": ok (bending span 1) -> deficient (bending span 1)" in line, line
        assert line.endswith(now), line
    light_after = _stored(db, "RB-2")
    # RB-2's utilisation moved but it stays ok with the same governing check: counted, not listed
    assert (light_before.status, light_before.governing) == (light_after.status, light_after.governing)
    assert light_after.status == "ok"
    assert light_after.utilisation != light_before.utilisation
    assert out[2] == (
        "rechecked 3 beams (1 archived beam not rechecked); 2 changed status or governing check; "
        "1 more changed utilisation only (`tables impact` lists them)"
    )
    assert out[3] == CAUTION
    assert len(out) == 4


def test_one_site_first_run_counts_what_had_no_result_and_ends_with_the_caution(tmp_path, capsys):
    db = tmp_path / "p.db"
    _two_sites(db)
    assert main(["recheck", "--db", str(db), "--site", "north", "--quiet"]) == 0
    out = capsys.readouterr().out.splitlines()
    assert out[0].startswith("North Depot  ·  RB-1  ·  grid A / 1-2")
    assert out[1].startswith("North Depot  ·  RB-2  ·  grid B / 1-2")
    for line in out[:2]:
        assert ": no stored result -> ok (bending span 1)  utilisation - -> " in line
    assert out[2:] == [
        "rechecked 2 beams (1 archived beam not rechecked); 2 changed status or governing check, "
        "2 of them with no stored result before",
        CAUTION,
    ]
    assert main(["recheck", "--db", str(db), "--quiet"]) == 0  # nothing moved: still the counts and the caution
    assert capsys.readouterr().out.splitlines()[-2:] == [
        "rechecked 3 beams (1 archived beam not rechecked); 1 changed status or governing check, "
        "1 of them with no stored result before",
        CAUTION,
    ]
    assert main(["recheck", "--db", str(db), "--quiet"]) == 0
    assert capsys.readouterr().out.splitlines() == [
        "rechecked 3 beams (1 archived beam not rechecked); 0 changed status or governing check",
        CAUTION,
    ]


def test_an_unknown_site_names_the_sites_there_are(tmp_path, capsys):
    db = tmp_path / "p.db"
    _two_sites(db)
    assert main(["recheck", "--db", str(db), "--site", "East"]) == 2
    assert "no single site matches 'East'; sites: North Depot; South Arena" in capsys.readouterr().err
    Store(db).create_site(name="North Annex")
    assert main(["recheck", "--db", str(db), "--site", "North"]) == 2
    assert "2 sites start with it: North Annex; North Depot" in capsys.readouterr().err


@pytest.mark.parametrize("value", ["0", "-1", "33", "two"])
def test_processes_outside_its_range_is_refused_naming_the_range(tmp_path, capsys, value):
    db = tmp_path / "p.db"
    Store(db).close()
    with pytest.raises(SystemExit) as stop:
        main(["recheck", "--db", str(db), "--processes", value])
    assert stop.value.code == 2
    assert f"argument --processes: '{value}' is not a whole number from 1 to 32" in capsys.readouterr().err


class _Terminal(io.StringIO):
    def isatty(self):
        return True


def test_progress_is_a_bar_on_a_terminal_and_a_line_per_tenth_in_a_file():
    piped = io.StringIO()  # stderr sent to a file or a pipe: not a terminal
    show = portfolio._progress(piped)
    for done in range(0, 100_001, 500):  # the portfolio reports after every part of 500 beams
        show(done, 100_000)
    lines = piped.getvalue().split("\n")
    assert "\r" not in piped.getvalue()
    assert lines[0] == "recheck: 0 / 100,000 beams"
    assert lines[-2:] == ["recheck: 100,000 / 100,000 beams", ""]
    assert len(lines) == 12  # 0, each tenth, and the line feed's empty tail
    term = _Terminal()
    show = portfolio._progress(term)
    show(0, 3)
    show(3, 3)
    assert term.getvalue().startswith("\r[")
    assert term.getvalue().endswith("] 3 / 3 beams\n")
    assert term.getvalue().count("\n") == 1
