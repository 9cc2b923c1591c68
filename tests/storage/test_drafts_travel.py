"""A beam being entered travels like any record: what a local save writes, every receiver accepts.

The beam form saves each entry as it is made; a span added before its support's restraints and length
are entered leaves that bearing with None values (mobile/viewmodels/beam.py, `_spans_entry`). A bundle
carrying such a draft was refused whole by every receiver ("invalid record: ... bearings ... 0.lateral"),
so nothing else from that tablet could travel by file until the bearing was filled in.
"""

from mobile.viewmodels.beam import BeamFormViewModel
from storage import Store
from storage.bundle import export_bundle, import_bundle
from tests.core.beams import glulam


def test_a_beam_whose_new_support_is_not_yet_entered_imports(tmp_path):
    a = Store(tmp_path / "a.db")
    site = a.create_site(name="Drafts")
    beam = a.save_beam(site.id, glulam())
    form = BeamFormViewModel(a, site.id, beam)
    assert form.set_field("spans", "4.8 m; 4.8 m")  # the third support's restraints and length not yet entered
    assert a.beam_record(beam)["bearings"][2] == {"lateral": None, "rotation": None, "length_mm": None}
    export_bundle(a, tmp_path / "drafts.zip")
    b = Store(tmp_path / "b.db")
    report = import_bundle(b, tmp_path / "drafts.zip")
    assert report.outcome == "applied", report.reason
    assert b.beam_record(beam)["bearings"] == a.beam_record(beam)["bearings"]
    assert b.digest() == a.digest()


def test_a_draft_bearing_with_a_wrong_value_is_still_refused(tmp_path):
    """Only None stands for 'not yet entered': any value given is held to the model (common practice for drafts)."""
    a = Store(tmp_path / "a.db")
    site = a.create_site(name="Drafts")
    beam = a.save_beam(site.id, glulam())
    wrong = {"lateral": "maybe", "rotation": None, "length_mm": None}
    a.update_beam(beam, {"spans_mm": [4800.0, 4800.0], "bearings": [*a.beam_record(beam)["bearings"], wrong]})
    export_bundle(a, tmp_path / "wrong.zip")
    report = import_bundle(Store(tmp_path / "b.db"), tmp_path / "wrong.zip")
    assert report.outcome == "refused"
    assert "bearings" in report.reason
