"""Issue 13 item 5: a re-review outcome per item in the app, and the close-out notice issued from the app.

The reviewer records verified / still open with a note and the recheck of the updated beam as evidence.

The engineering fact the evidence rests on: CSA O86-19 7.5.6.3.1 (glulam with d/b > 2.5 needs lateral
and rotational restraint at the bearings); a 130 x 456 mm member (d/b 3.5) without rotation restraint at a
bearing carries the `bearing_restraint_missing` finding, and with it restored it does not.
"""

import io

from pypdf import PdfReader

from core import recheck
from core.records import Stage
from mobile.issue import acknowledge, issue_notice_for_site, rows_for_items
from mobile.viewmodels import NoticeViewModel
from mobile.viewmodels.deficiency import DeficiencyViewModel
from storage import Store
from tests.core.beams import glulam

HELD = {"lateral": True, "rotation": True, "length_mm": 140}
FREE = {"lateral": True, "rotation": False, "length_mm": 140}


def _site(tmp_path):
    store = Store(tmp_path / "r.db")
    site = store.create_site(name="Spruce Court", project_number="P9")
    beam = glulam(mark="RB-2", bearings=[HELD, FREE])
    bid = store.save_beam(site.id, beam, {"level": "Roof", "gridline": "B / 1-2"})
    (f,) = [f for f in recheck(beam).findings if f.code == "bearing_restraint_missing"]
    where = "Roof, grid B / 1-2, RB-2" + (f", {f.region}" if f.region else "")
    d = store.raise_deficiency(site.id, bid, f.code, f.priority.value, where, f.message, f.clause, f.action)
    ack = acknowledge(store, rows_for_items(store, site.id), "R. Ames")
    issue_notice_for_site(store, site.id, tmp_path / "n.pdf", "R. Ames", acknowledgement=ack)
    store.set_device_user("R. Ames", "reviewer")
    return store, site.id, bid, d.id


def test_still_open_then_verified_with_the_recheck_as_evidence(tmp_path):
    store, _site_id, bid, did = _site(tmp_path)
    vm = DeficiencyViewModel(store, did)
    assert vm.rereview_text() == "No re-review recorded yet"
    assert not vm.rereview("verified", "R. Ames", "reviewer", "blocking seen")  # the beam still shows it
    assert "still shows this finding" in vm.message
    assert store.deficiency(did).rereview is None
    assert vm.rereview("still_open", "R. Ames", "reviewer", "no blocking at S2 yet")
    r = store.deficiency(did).rereview
    assert r.outcome == "still_open"
    assert r.note == "no blocking at S2 yet"
    assert "recheck of RB-2 as now recorded" in r.evidence
    assert r.at.endswith("Z")
    assert store.deficiency(did).stage is Stage.open
    store.update_beam(bid, {"bearings": [HELD, HELD]})  # what is now installed
    assert vm.rereview("verified", "R. Ames", "reviewer", "blocking both sides at S2")
    d = store.deficiency(did)
    assert d.stage is Stage.verified
    assert d.rereview.outcome == "verified"
    assert "OK" in d.rereview.evidence


def test_reported_corrected_but_not_done_is_reopened(tmp_path):
    store, _site_id, _bid, did = _site(tmp_path)
    store.move_status(did, "corrected", "Site super", "contractor", note="done")
    vm = DeficiencyViewModel(store, did)
    assert vm.rereview("still_open", "R. Ames", "reviewer", "not installed")
    d = store.deficiency(did)
    assert d.stage is Stage.open
    assert d.cycle == 1  # a new cycle
    assert d.rereview.cycle == 1


def test_only_a_reviewer_records_a_rereview(tmp_path):
    store, _site_id, _bid, did = _site(tmp_path)
    vm = DeficiencyViewModel(store, did)
    assert not vm.rereview("still_open", "Site super", "contractor", "x")
    assert "Only a reviewer" in vm.message
    assert store.deficiency(did).rereview is None


def test_closeout_from_the_app_lists_verified_and_new_with_evidence(tmp_path):
    store, site_id, bid, did = _site(tmp_path)
    store.update_beam(bid, {"bearings": [HELD, HELD]})
    assert DeficiencyViewModel(store, did).rereview("verified", "R. Ames", "reviewer", "blocking both sides")
    new = store.raise_deficiency(site_id, bid, "observation", "observation", "Grid B", "Split end", "-", "Review")
    vm = NoticeViewModel(store, site_id)
    assert vm.issue_closeout("R. Ames", tmp_path / "out") is None  # memory rows not yet acknowledged
    assert "acknowledge" in vm.message
    assert vm.acknowledge("R. Ames")
    path = vm.issue_closeout("R. Ames", tmp_path / "out")
    assert path is not None, vm.message
    text = " ".join(" ".join(p.extract_text().split()) for p in PdfReader(io.BytesIO(path.read_bytes())).pages)
    assert "Close-out notice" in text
    number = store.deficiency(did).number
    at = text.index("Re-review outcome per item")
    assert text.index(number, at) < text.index("verified (closed)", at)
    assert "blocking both sides" in text
    assert "recheck of RB-2 as now recorded" in text
    assert text.index(new.number, at) < text.index("new", text.index(new.number, at))
    assert len(store.notices(site_id)) == 2  # the notice, then the numbered close-out


def test_no_closeout_before_a_notice(tmp_path):
    store = Store(tmp_path / "e.db")
    site = store.create_site(name="Empty", project_number="P0")
    vm = NoticeViewModel(store, site.id)
    assert vm.issue_closeout("R. Ames", tmp_path) is None
    assert "none issued" in vm.message
