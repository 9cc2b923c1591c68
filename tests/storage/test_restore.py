"""A tablet restored from a backup of its database, syncing by bundle files (review s34).

The restored tablet's saves made before it hears back reuse seqs its lost work was sent under; the
import renumbers them. These tests check what else must hold: a renumbered save takes a fresh stamp
(its old one may be the very stamp of a lost save: then the winner depended on arrival order), the
projection stays what a replay of the log gives, and no deficiency or notice number is given twice.
"""

import json
import time

import pytest

from storage import Store, identity
from storage.bundle import export_bundle, import_bundle
from storage.stamps import utc_stamp
from tests.core.beams import glulam
from tests.storage.devices import backup as _backup
from tests.storage.devices import restore as _restore
from tests.storage.devices import sync_file as _sync

HOUR = 3_600_000


def _tablet(path):
    """A tablet with its key made at install, as an enrolled one has (a key made after the backup is another key)."""
    tablet = Store(path)
    identity.device_key(tablet.db)
    return tablet


def _in_step(*stores):
    for s in stores:
        assert s.projections() == s.rebuild_projections()
    assert len({s.digest() for s in stores}) == 1


def test_restored_save_with_the_lost_saves_stamp_wins_everywhere(tmp_path):
    """A save after the restore with the very stamp of a lost save wins on both sides once renumbered.

    The tablet's HLC runs on its counter (an office clock an hour fast), so its first save after the
    restore gets exactly the stamp of its first lost save.
    """
    office = Store(tmp_path / "office.db", wall_clock_ms=lambda: int(time.time() * 1000) + HOUR)
    tablet = _tablet(tmp_path / "tablet.db")
    site = office.create_site(name="Tie")
    beam = office.save_beam(site.id, glulam())
    _sync(office, tablet, tmp_path / "0.zip")
    _backup(tablet, tmp_path / "backup.db")
    lost = tablet.update_beam(beam, {"b_mm": 175})
    _sync(tablet, office, tmp_path / "1.zip", peer="office")
    tablet = _restore(tablet, tmp_path / "backup.db", keep_mark=False)
    again = tablet.update_beam(beam, {"b_mm": 200})  # the inspector re-measures after the restore
    assert (again.seq, again.hlc) == (lost.seq, lost.hlc)  # the case: same seq, same stamp
    export_bundle(tablet, tmp_path / "2.zip", peer="office")
    assert import_bundle(office, tmp_path / "2.zip").outcome == "refused"  # "restored from a backup"
    _sync(office, tablet, tmp_path / "3.zip")  # the tablet renumbers its new save
    moved = tablet.db.execute("SELECT seq, hlc FROM op WHERE origin=? ORDER BY seq", [tablet.device_id]).fetchall()
    assert moved[0] == (lost.seq, lost.hlc)  # the office's copy, as it was sent
    assert moved[1][0] == lost.seq + 1  # the new save: a fresh seq
    assert moved[1][1] > lost.hlc  # and a fresh stamp
    _sync(tablet, office, tmp_path / "4.zip", peer="office")
    _sync(office, tablet, tmp_path / "5.zip")
    assert office.beam(beam).b_mm == tablet.beam(beam).b_mm == 200
    _in_step(office, tablet)


def test_a_later_restored_save_keeps_naming_the_one_it_followed(tmp_path):
    """Two saves after the restore, the second made looking at the first: its base follows the first's new stamp.

    So the office records one conflict (the restored line against the lost save), not two.
    """
    office, tablet = Store(tmp_path / "office.db"), _tablet(tmp_path / "tablet.db")
    site = office.create_site(name="Base")
    beam = office.save_beam(site.id, glulam())
    _sync(office, tablet, tmp_path / "0.zip")
    _backup(tablet, tmp_path / "backup.db")
    tablet.update_beam(beam, {"b_mm": 175})
    _sync(tablet, office, tmp_path / "1.zip", peer="office")
    tablet = _restore(tablet, tmp_path / "backup.db", keep_mark=False)
    tablet.update_beam(beam, {"b_mm": 200})
    tablet.update_beam(beam, {"b_mm": 210})
    _sync(office, tablet, tmp_path / "2.zip")
    moved = tablet.db.execute("SELECT seq, hlc, base FROM op WHERE origin=? AND seq>1 ORDER BY seq", [tablet.device_id])
    (first, first_hlc, _), (_, _, second_base) = moved.fetchall()
    assert json.loads(second_base) == {"b_mm": [first_hlc, tablet.device_id]}
    _sync(tablet, office, tmp_path / "3.zip", peer="office")
    assert [(c["winner_seq"], c["loser_seq"]) for c in office.conflicts()] == [(first, 1)]
    assert office.beam(beam).b_mm == tablet.beam(beam).b_mm == 210
    _in_step(office, tablet)


def test_a_restored_save_that_lost_a_race_wins_once_renumbered(tmp_path):
    """A restored save that lost to a later colleague's edit wins once renumbered, and the conflict says so.

    The renumbered save is stamped past every stamp the tablet has seen; every replica agrees.
    """
    office, tablet = Store(tmp_path / "office.db"), _tablet(tmp_path / "tablet.db")
    colleague = Store(tmp_path / "colleague.db")
    site = office.create_site(name="Race")
    beam = office.save_beam(site.id, glulam())
    _sync(office, tablet, tmp_path / "0.zip")
    _sync(office, colleague, tmp_path / "0c.zip")
    _backup(tablet, tmp_path / "backup.db")
    tablet.update_beam(beam, {"d_mm": 532})
    _sync(tablet, office, tmp_path / "1.zip", peer="office")
    tablet = _restore(tablet, tmp_path / "backup.db", keep_mark=False)
    tablet.update_beam(beam, {"b_mm": 200})
    time.sleep(0.01)
    colleague.update_beam(beam, {"b_mm": 300})
    _sync(colleague, tablet, tmp_path / "c.zip")
    assert tablet.beam(beam).b_mm == 300
    _sync(office, tablet, tmp_path / "2.zip")  # the lost save comes back: the restored one is renumbered
    assert tablet.beam(beam).b_mm == 200
    (conflict,) = [c for c in tablet.conflicts() if c["field"] == "b_mm"]
    assert (conflict["winner_origin"], conflict["winner_value"]) == (tablet.device_id, "200")
    assert (conflict["loser_origin"], conflict["loser_value"]) == (colleague.device_id, "300")
    _sync(tablet, office, tmp_path / "3.zip", peer="office")
    _sync(colleague, office, tmp_path / "4.zip", peer="office")
    _sync(office, tablet, tmp_path / "5.zip")
    _sync(office, colleague, tmp_path / "6.zip")
    assert (office.beam(beam).b_mm, office.beam(beam).d_mm) == (200, 532)
    _in_step(office, tablet, colleague)


def test_a_renumbered_status_move_keeps_its_event_in_step_with_the_log(tmp_path):
    """A status event carries its op's stamp: the renumbered move's event is written again with the new one."""
    office, tablet = Store(tmp_path / "office.db"), _tablet(tmp_path / "tablet.db")
    site = tablet.create_site(name="Status")
    beam = tablet.save_beam(site.id, glulam())
    d = tablet.raise_deficiency(site.id, beam, "x", "immediate", "Grid B", "first", "r", "a")
    _sync(tablet, office, tmp_path / "0.zip", peer="office")
    _backup(tablet, tmp_path / "backup.db")
    tablet.update_beam(beam, {"b_mm": 175})
    _sync(tablet, office, tmp_path / "1.zip", peer="office")
    tablet = _restore(tablet, tmp_path / "backup.db", keep_mark=False)
    tablet.move_status(d.id, "corrected", "C. Fixer", "contractor")
    _sync(office, tablet, tmp_path / "2.zip")
    _sync(tablet, office, tmp_path / "3.zip", peer="office")
    assert office.deficiency(d.id).stage.name == tablet.deficiency(d.id).stage.name == "corrected"
    assert office.beam(beam).b_mm == 175
    _in_step(office, tablet)


@pytest.mark.parametrize("keep_mark", [True, False], ids=["mark_kept", "mark_lost"])
def test_restored_tablet_never_reuses_a_deficiency_or_notice_number(tmp_path, keep_mark):
    """Its numbers come back with its records (import), and with the mark when it survived."""
    office, tablet = Store(tmp_path / "office.db"), _tablet(tmp_path / "tablet.db")
    site = tablet.create_site(name="Numbers", project_number="P-7")
    beam = tablet.save_beam(site.id, glulam())
    _sync(tablet, office, tmp_path / "0.zip", peer=office.device_id)
    _backup(tablet, tmp_path / "backup.db")
    d1 = tablet.raise_deficiency(site.id, beam, "x", "immediate", "Grid B", "first", "r", "a")
    n1 = tablet.next_notice_number(tablet.site(site.id))
    tablet.issue_notice(site.id, n1, b"%PDF-1 first", [d1.id], "A. Rev", utc_stamp())
    _sync(tablet, office, tmp_path / "1.zip", peer=office.device_id)
    tablet = _restore(tablet, tmp_path / "backup.db", keep_mark=keep_mark)
    _sync(office, tablet, tmp_path / "2.zip")  # it hears back from the office
    d2 = tablet.raise_deficiency(site.id, beam, "y", "immediate", "Grid C", "second", "r", "a")
    n2 = tablet.next_notice_number(tablet.site(site.id))
    assert (d1.number, n1) == (f"D-{tablet.device_code}-001", f"P-7-FR-{tablet.device_code}-001")
    assert (d2.number, n2) == (f"D-{tablet.device_code}-002", f"P-7-FR-{tablet.device_code}-002")


def test_a_tablet_restored_with_its_mark_numbers_on_before_hearing_back(tmp_path):
    """The mark carries the numbers given so far: the first deficiency after the restore takes the next one."""
    office, tablet = Store(tmp_path / "office.db"), _tablet(tmp_path / "tablet.db")
    site = tablet.create_site(name="Numbers", project_number="P-7")
    beam = tablet.save_beam(site.id, glulam())
    _backup(tablet, tmp_path / "backup.db")
    d1 = tablet.raise_deficiency(site.id, beam, "x", "immediate", "Grid B", "first", "r", "a")
    tablet.issue_notice(
        site.id, tablet.next_notice_number(site), b"%PDF-1 first", [d1.id], "A. Rev", time.strftime("%Y-%m-%d")
    )
    _sync(tablet, office, tmp_path / "1.zip", peer=office.device_id)  # the mark records what left
    tablet = _restore(tablet, tmp_path / "backup.db", keep_mark=True)
    d2 = tablet.raise_deficiency(site.id, beam, "y", "immediate", "Grid C", "second", "r", "a")
    assert d2.number == f"D-{tablet.device_code}-002"
    assert tablet.next_notice_number(site) == f"P-7-FR-{tablet.device_code}-002"


def test_a_number_held_here_is_never_given_again(tmp_path):
    """Allocation itself goes past every number of this device's code held, whatever the counter says."""
    tablet = _tablet(tmp_path / "tablet.db")
    site = tablet.create_site(name="Numbers", project_number="P-7")
    beam = tablet.save_beam(site.id, glulam())
    tablet.raise_deficiency(site.id, beam, "x", "immediate", "Grid B", "first", "r", "a")
    tablet.issue_notice(site.id, tablet.next_notice_number(site), b"%PDF-1 first", [], "A. Rev", "2026-12-01")
    tablet.db.execute("UPDATE meta SET value='0' WHERE key IN ('counter_deficiency', 'counter_notice')")
    d = tablet.raise_deficiency(site.id, beam, "y", "immediate", "Grid C", "second", "r", "a")
    assert d.number == f"D-{tablet.device_code}-002"
    assert tablet.next_notice_number(site) == f"P-7-FR-{tablet.device_code}-002"
