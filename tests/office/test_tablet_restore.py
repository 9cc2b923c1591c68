"""A tablet that syncs only with the office hub, restored from a backup of its database (review s34).

A push the hub acknowledged leaves the sent mark, as an export does, so a restore that keeps the mark
is seen at once. Without the mark, the pull is what tells: the tablet's own ops come back as the hub
holds them, with other content than its saves since the restore; the pull takes the hub's copies and
renumbers those saves past them (nothing lost), to be sent at the next push.
"""

import json
from pathlib import Path

import pytest

from mobile.hub_client import sync
from storage.hubsync import rejections
from tests.core.beams import glulam
from tests.storage.devices import backup as _backup
from tests.storage.devices import restore as _restore


def _tablet_with_lost_work(served, tmp_path, keep_mark):
    """A tablet whose second beam edit reached the office and was then lost to a restore; and the beam."""
    tablet = served.tablet(tmp_path / "t.db", "Tablet T", "T. Rev", "reviewer")
    site = tablet.create_site(name="Restore via hub", project_number="P-9")
    beam = tablet.save_beam(site.id, glulam())
    assert sync(tablet).in_step
    _backup(tablet, tmp_path / "backup.db")
    tablet.update_beam(beam, {"b_mm": 175})  # seq 3: reaches the office
    d1 = tablet.raise_deficiency(site.id, beam, "x", "immediate", "Grid B", "first", "r", "a")
    assert sync(tablet).in_step
    return _restore(tablet, tmp_path / "backup.db", keep_mark), site, beam, d1


def _in_step(served, tablet):
    assert rejections(tablet) == []
    assert tablet.projections() == tablet.rebuild_projections()
    assert served.hub.digest() == tablet.digest()


def test_a_push_the_hub_acknowledged_leaves_the_sent_mark(served, tmp_path):
    tablet = served.tablet(tmp_path / "t.db", "Tablet T", "T. Rev", "reviewer")
    site = tablet.create_site(name="Mark")
    tablet.save_beam(site.id, glulam())
    assert sync(tablet).in_step
    mark = json.loads(Path(tablet.path + ".sent").read_text())
    assert (mark["device_id"], mark["seq"], mark["peers"]) == (tablet.device_id, 2, {"hub": 2})


@pytest.mark.parametrize("keep_mark", [True, False], ids=["mark_kept", "mark_lost"])
def test_hub_synced_tablet_restored_from_backup_syncs_on(served, tmp_path, keep_mark):
    tablet, _, beam, _ = _tablet_with_lost_work(served, tmp_path, keep_mark)
    tablet.update_beam(beam, {"d_mm": 532})  # saved after the restore (without the mark: seq 3 again)
    first = sync(tablet)
    if keep_mark:
        assert first.in_step  # the mark moved the counter past what was sent: nothing reused
    else:
        assert [(r["origin"], r["seq"]) for r in first.rejected] == [(tablet.device_id, 3)]  # the hub holds 3
    assert sync(tablet).in_step  # without the mark: the renumbered save goes now
    assert (tablet.beam(beam).b_mm, tablet.beam(beam).d_mm) == (175, 532)
    _in_step(served, tablet)


def test_restored_tablet_that_hears_back_first_saves_under_a_new_seq(served, tmp_path):
    """Its own ops come back past its counter: the counter follows, so its next save reuses no seq."""
    tablet, _, beam, _ = _tablet_with_lost_work(served, tmp_path, keep_mark=False)
    assert sync(tablet).in_step
    assert tablet.update_beam(beam, {"d_mm": 532}).seq == 5
    assert sync(tablet).in_step
    _in_step(served, tablet)


def test_restored_tablet_numbers_past_what_comes_back_from_the_hub(served, tmp_path):
    tablet, site, beam, d1 = _tablet_with_lost_work(served, tmp_path, keep_mark=False)
    assert sync(tablet).in_step
    d2 = tablet.raise_deficiency(site.id, beam, "y", "immediate", "Grid C", "second", "r", "a")
    assert (d1.number, d2.number) == (f"D-{tablet.device_code}-001", f"D-{tablet.device_code}-002")


def test_restored_saves_some_of_which_the_hub_took_converge(served, tmp_path):
    """More saves after the restore than were lost: the hub refuses those under its held seqs and takes the rest.

    The pull renumbers every save since the restore past what the hub holds, so the later ones stay later;
    one the hub took is then held under both seqs (same content): nothing is lost and both sides agree.
    """
    tablet, site, beam, d1 = _tablet_with_lost_work(served, tmp_path, keep_mark=False)
    tablet.update_beam(beam, {"d_mm": 532})  # seq 3: the hub holds 3 (b_mm 175)
    tablet.update_beam(beam, {"b_mm": 200})  # seq 4: the hub holds 4 (the deficiency)
    tablet.update_beam(beam, {"b_mm": 210})  # seq 5: free at the hub, taken
    first = sync(tablet)
    assert [r["seq"] for r in first.rejected] == [3, 4]
    assert sync(tablet).in_step
    assert (tablet.beam(beam).b_mm, tablet.beam(beam).d_mm) == (210, 532)
    assert [d.id for d in tablet.deficiencies(site.id)] == [d1.id]  # the lost work is back
    _in_step(served, tablet)
