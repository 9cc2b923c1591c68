"""The hub enforces the rules whatever a device claims; refused ops are quarantined, reported back, shown in words."""

import time

import pytest

from mobile.hub_client import HubError, sync
from mobile.viewmodels.sync import SyncViewModel
from storage import Store
from storage.clock import uuid7
from tests.core.beams import glulam


def _deficiency(store):
    site = store.create_site(name="Rules")
    beam = store.save_beam(site.id, glulam())
    d = store.raise_deficiency(
        site.id,
        beam,
        "bending_overstress",
        "before_loading",
        "Grid B",
        "overstressed",
        "cl. 7.5.6.5",
        "engineer of record to review",
    )
    return site, d


def test_only_a_reviewer_verifies_whatever_the_device_claims(served, tmp_path):
    tech = served.tablet(tmp_path / "t.db", "Tablet T", "T. Tech", "technician")
    _, d = _deficiency(tech)
    tech.move_status(d.id, "corrected", "T. Tech", "contractor")
    tech.move_status(d.id, "verified", "T. Tech", "reviewer")  # the device claims the reviewer role
    before_quarantine = len(served.hub.quarantine())
    result = sync(tech)
    assert not result.in_step
    assert [r["reason"].split(":")[0] for r in result.rejected] == ["not_reviewer"]
    assert len(served.hub.quarantine()) == before_quarantine + 1  # kept on the hub, not dropped
    hub_stage = served.hub.db.execute("SELECT data FROM deficiency WHERE id=?", [d.id]).fetchone()[0]
    assert '"stage":1' in hub_stage  # corrected reached the hub; verified did not
    vm = SyncViewModel(tech)
    words = vm.held_back()
    assert len(words) == 1
    assert "only a reviewer verifies" in words[0]
    assert "technician" in words[0]
    assert "held back" in vm.hub_status()


def test_reviewer_verifies_and_everyone_converges(served, tmp_path):
    rev = served.tablet(tmp_path / "r.db", "Tablet R", "R. Eng", "reviewer")
    tech = served.tablet(tmp_path / "t.db", "Tablet T", "T. Tech", "technician")
    _, d = _deficiency(tech)
    tech.move_status(d.id, "corrected", "T. Tech", "contractor")
    assert sync(tech).in_step
    sync(rev)
    rev.move_status(d.id, "verified", "R. Eng", "reviewer")
    assert sync(rev).in_step
    sync(tech)
    assert tech.deficiency(d.id).stage.name == "verified"
    assert tech.digest() == rev.digest() == served.hub.digest()


def test_status_changed_by_an_edit_is_refused(served, tmp_path):
    a = served.tablet(tmp_path / "a.db")
    _, d = _deficiency(a)
    a.save("deficiency", d.id, {"stage": 2})  # bypasses the lattice on this device
    result = sync(a)
    assert [r["reason"].split(":")[0] for r in result.rejected] == ["status_by_edit"]
    assert '"stage":2' not in served.hub.db.execute("SELECT data FROM deficiency WHERE id=?", [d.id]).fetchone()[0]


def test_status_never_moves_back(served, tmp_path):
    a = served.tablet(tmp_path / "a.db")
    _, d = _deficiency(a)
    a.move_status(d.id, "corrected", "A", "contractor")
    assert sync(a).in_step
    a.save(
        "deficiency",
        d.id,
        {
            "cycle": 0,
            "stage": 0,
            "actor": "A",
            "role": "reviewer",
            "at": "x",
            "note": "",
            "evidence_sha256": "",
            "site_id": d.site_id,
        },
        kind="status",
    )
    result = sync(a)
    assert [r["reason"].split(":")[0] for r in result.rejected] == ["status_backward"]


def test_issued_records_and_measurements_are_immutable(served, tmp_path):
    a = served.tablet(tmp_path / "a.db", "A")
    b = served.tablet(tmp_path / "b.db", "B")
    mid = uuid7()
    a.save("measurement", mid, {"beam_id": "x", "site_id": "s", "b_mm": 130}, kind="insert")
    b.save("measurement", mid, {"beam_id": "x", "site_id": "s", "b_mm": 175}, kind="insert")
    assert sync(a).in_step
    before = b.projections()
    with pytest.raises(HubError, match="contradicts a record held here"):
        sync(b)  # pushes (the hub quarantines b's copy), then refuses the hub's page whole
    assert b.projections() == before
    assert [q["reason"].split(":")[0] for q in served.hub.quarantine()] == ["immutable"]
    assert "already held with different content" in SyncViewModel(b).held_back()[0]
    row = served.hub.db.execute("SELECT data FROM measurement WHERE id=?", [mid]).fetchone()[0]
    assert '"b_mm":130' in row


def test_ops_more_than_ten_minutes_ahead_are_held_then_accepted_when_due(served, tmp_path):
    ahead = 15 * 60 * 1000  # sync.md 3.3: more than 10 minutes ahead is held
    fast = Store(tmp_path / "fast.db", wall_clock_ms=lambda: int(time.time() * 1000) + ahead)
    from mobile.hub_client import enroll

    enroll(fast, served.url, served.hub.new_code("Fast", "F", "reviewer"))
    fast.create_site(name="Clock ahead")
    result = sync(fast)
    assert [r["reason"].split(":")[0] for r in result.rejected] == ["clock_ahead"]
    assert served.hub.digest() != fast.digest()
    assert "clock" in SyncViewModel(fast).held_back()[0]
    served.hub.clock_ms = lambda: int(time.time() * 1000) + 6 * 60 * 1000  # 6 min on: now only 9 min ahead
    assert sync(fast).in_step
    assert served.hub.digest() == fast.digest()
    assert served.hub.quarantine() == []
