"""A status move the hub refuses is refused on a tablet too, when it arrives by bundle file.

The rule is the office's (only a device enrolled as a reviewer verifies a deficiency, office/rules.py); the
tablets learn each device's enrolled role from the hub's device list. Common practice for sign-offs: a
verification carries the authority of the person enrolled for it, never of a name typed on another device.
"""

from mobile.hub_client import sync
from storage.bundle import export_bundle, import_bundle
from storage.hubsync import pull_quarantine_words
from tests.core.beams import glulam


def test_a_technicians_bundle_cannot_verify_an_item_on_a_reviewers_tablet(served, tmp_path):
    rev = served.tablet(tmp_path / "r.db", "Tablet R", "R. Eng", "reviewer")
    tech = served.tablet(tmp_path / "t.db", "Tablet T", "T. Tech", "technician")
    site = rev.create_site(name="Roles")
    beam = rev.save_beam(site.id, glulam())
    d = rev.raise_deficiency(site.id, beam, "bending_overstress", "immediate", "Grid B", "overstressed", "r", "a")
    assert sync(rev).in_step
    assert sync(tech).in_step  # both hold the item, and the hub's device list with its roles
    tech.move_status(d.id, "corrected", "T. Tech", "contractor")
    tech.move_status(d.id, "verified", "R. Eng", "reviewer")  # typed as the reviewer, on a technician's tablet
    tech.save_beam(site.id, glulam(mark="T-2"))  # other work in the same file still arrives
    export_bundle(tech, tmp_path / "t.zip", peer=rev.device_id)
    report = import_bundle(rev, tmp_path / "t.zip")
    assert report.outcome == "applied"
    assert "1 changes set aside, not applied (only a reviewer verifies a deficiency" in report.warning
    assert rev.deficiency(d.id).stage.name == "corrected"  # the correction is applied, the sign-off is not
    assert "T-2" in {b["mark"] for _, b in rev.beams(site.id)}
    assert any("only a reviewer verifies" in w for w in pull_quarantine_words(rev))
    # the hub refuses the same move, so the two agree once both have synced
    result = sync(tech)
    assert [r["reason"].split(":")[0] for r in result.rejected] == ["not_reviewer"]
    assert sync(rev).in_step
    assert served.hub.digest() == rev.digest()
    # the same file again changes nothing and sets the move aside again, nothing lost or doubled
    again = import_bundle(rev, tmp_path / "t.zip")
    assert again.outcome == "applied"
    assert rev.deficiency(d.id).stage.name == "corrected"
