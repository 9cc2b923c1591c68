"""A new beam carries nothing over from the last beam on the site.

The stamp and the use are unfavourable until entered (O86-19 Table 7.3 note: weaker face in tension;
NBC Table 9.4.3.1: the strictest limit, L/360), each said in a finding; copying another beam is the
reviewer's explicit action.
"""

import pytest

from core.clauses.factors import system_factor_kh
from core.kinds import FindingCode
from core.models import Beam
from core.results import Status
from mobile.demo.run import load_demo
from mobile.viewmodels import BeamFormViewModel, SiteViewModel
from mobile.viewmodels.beam import SYSTEM_NOT_RECORDED
from storage import Store

ENTRIES = {  # everything a recheck needs except the stamp and the use
    "material": "glulam", "species": "D.Fir-L", "grade": "20f-E", "b_mm": "130", "d_mm": "456", "spans": "7.2 m",
    "bearing1.lateral": "yes", "bearing1.rotation": "yes", "bearing1.length_mm": "140",
    "bearing2.lateral": "yes", "bearing2.rotation": "yes", "bearing2.length_mm": "140",
    "top_braced_by": "decking", "top_fastened": "yes", "dead_kn_m": "2", "snow_kn_m": "3",
}  # fmt: skip


@pytest.fixture
def site(tmp_path):
    store = Store(tmp_path / "a.db")
    site_id = load_demo(store)
    return store, site_id


def _last_beam_with_favourable_inputs(store, site_id):
    beam_id = SiteViewModel(store, site_id).new_beam()
    form = BeamFormViewModel(store, site_id, beam_id)
    for name, text in {**ENTRIES, "top_stamp": "up", "use": "roof_no_ceiling"}.items():
        assert form.set_field(name, text), (name, form.errors)
    return beam_id


def test_new_beam_does_not_take_stamp_or_use_from_the_last_beam(site):
    store, site_id = site
    last = _last_beam_with_favourable_inputs(store, site_id)
    assert store.beam_record(last)["top_stamp"] == "up"
    new = SiteViewModel(store, site_id).new_beam()
    rec = store.beam_record(new)
    assert rec.get("top_stamp") in (None, "not_visible")
    assert rec.get("use") is None
    form = BeamFormViewModel(store, site_id, new)
    assert form.form()["use"] == "not recorded"
    assert form.form()["top_stamp"] == "not_visible"
    for name, text in ENTRIES.items():
        assert form.set_field(name, text), (name, form.errors)
    r = form.refresh()
    assert r is not None
    # NBC Table 9.4.3.1: the strictest limit, L/360 of 7200 mm, until the use is entered
    assert r.deflection.limit_mm <= 7200 / 360 + 1e-9
    codes = [f.code for f in r.findings]
    assert FindingCode.input_assumed in codes  # the use, assumed
    assert FindingCode.layup_inverted in codes  # the stamp of the unbalanced 20f-E, assumed down (weaker face)
    assert r.bending[0].fb_mpa == pytest.approx(19.2)  # 20f-E fb negative face (O86-19 Table 7.3, memory), KD 1
    assert form.status() == r.status.value
    assert form.status() in {s.value for s in Status}


def test_copy_from_is_the_explicit_way_to_take_them(site):
    store, site_id = site
    last = _last_beam_with_favourable_inputs(store, site_id)
    new = SiteViewModel(store, site_id).new_beam()
    form = BeamFormViewModel(store, site_id, new)
    form.copy_from(last)
    rec = store.beam_record(new)
    assert rec["top_stamp"] == "up"
    assert rec["use"] == "roof_no_ceiling"


@pytest.mark.parametrize(("name", "text"), [("top_stamp", "up"), ("service", "wet")])
def test_undoing_the_first_pick_on_a_new_beam_puts_back_the_default(site, name, text):
    """A field the new beam never stored goes back to the model's default, not to nothing (which no recheck reads)."""
    store, site_id = site
    form = BeamFormViewModel(store, site_id, SiteViewModel(store, site_id).new_beam())
    for entry, typed in ENTRIES.items():
        assert form.set_field(entry, typed), (entry, form.errors)
    assert name not in store.beam_record(form.beam_id)
    assert form.set_field(name, text)
    assert form.undo()
    assert store.beam_record(form.beam_id)[name] == Beam.model_fields[name].get_default()
    assert form.refresh() is not None, form.recheck_error


def _fj1(store, site_id):
    return BeamFormViewModel(store, site_id, next(i for i, r in store.beams(site_id) if r["mark"] == "FJ-1"))


def _kh(result):
    return next(t.value for t in result.bending[0].trace if t.symbol == "KH")


def test_a_sawn_members_system_is_not_recorded_until_picked_and_taken_as_a_single_member(site):
    """The demo's joist was saved whole (core's default "single"): the form says not recorded, the recheck KH 1.0."""
    store, site_id = site
    form = _fj1(store, site_id)
    assert form.form()["system"] == SYSTEM_NOT_RECORDED == "not recorded (taken as single member)"
    assert form.options("system")[0] == SYSTEM_NOT_RECORDED
    assert _kh(form.refresh()) == system_factor_kh("single")


@pytest.mark.parametrize("system", ["single", "shared", "light_frame", "built_up"])
def test_a_picked_system_is_saved_with_the_beam_and_read_back(site, system):
    store, site_id = site
    assert _fj1(store, site_id).set_field("system", system)
    again = _fj1(store, site_id)  # the form opened again reads what was saved
    assert again.form()["system"] == system
    rec = again.record()
    assert (rec["system"], rec["system_recorded"]) == (system, True)
    assert store.beam(again.beam_id).system.value == system  # what the recheck reads
    assert _kh(again.refresh()) == system_factor_kh(system)
    assert again.set_field("system", SYSTEM_NOT_RECORDED)
    rec = _fj1(store, site_id).record()
    assert (rec["system"], rec["system_recorded"]) == ("single", False)
    assert _fj1(store, site_id).form()["system"] == SYSTEM_NOT_RECORDED


def test_a_glulam_beam_takes_no_system_and_turning_sawn_to_glulam_clears_it(site):
    store, site_id = site
    rb1 = BeamFormViewModel(store, site_id, next(i for i, r in store.beams(site_id) if r["mark"] == "RB-1"))
    assert not rb1.set_field("system", "shared")  # core: glulam beams take KH = 1.0
    assert "glulam" in rb1.errors["system"]
    assert rb1.form()["system"] == SYSTEM_NOT_RECORDED
    joist = _fj1(store, site_id)
    assert joist.set_field("system", "light_frame")
    assert joist.set_field("b_mm", "80")  # a glulam width, so the material can change
    assert joist.set_field("material", "glulam"), joist.errors
    rec = joist.record()
    assert (rec["system"], rec["system_recorded"]) == ("single", False)
    assert joist.undo()  # the material and the system come back together
    assert joist.record()["system"] == "light_frame"


def test_copy_from_takes_the_system_and_undoing_a_first_pick_keeps_the_beam_rechecked(site):
    store, site_id = site
    assert _fj1(store, site_id).set_field("system", "shared")
    new = BeamFormViewModel(store, site_id, SiteViewModel(store, site_id).new_beam())
    new.copy_from(_fj1(store, site_id).beam_id)
    assert (new.record()["system"], new.form()["system"]) == ("shared", "shared")
    fresh = BeamFormViewModel(store, site_id, SiteViewModel(store, site_id).new_beam())
    sawn = {**ENTRIES, "material": "sawn", "species": "S-P-F", "grade": "No.1/No.2", "b_mm": "38", "d_mm": "235"}
    sawn["spans"] = "3.6 m"
    for name, text in sawn.items():
        assert fresh.set_field(name, text), (name, fresh.errors)
    assert "system" not in fresh.record()
    assert fresh.set_field("system", "shared")
    assert fresh.undo()
    assert fresh.record()["system"] == "single"  # core's default, not nothing
    assert fresh.refresh() is not None, fresh.recheck_error
    assert fresh.form()["system"] == SYSTEM_NOT_RECORDED


def test_a_load_that_is_not_a_number_is_refused_in_the_fields_words(site, tmp_path):
    """The reviewer reads 'dead load', never the stored field's name (dead_kn_m), on the beam and the site form."""
    from mobile.viewmodels import SitesViewModel

    store, site_id = site
    form = BeamFormViewModel(store, site_id, SiteViewModel(store, site_id).new_beam())
    assert not form.set_field("dead_kn_m", "heavy")
    assert form.errors["dead_kn_m"] == "dead load: 'heavy' is not a number; enter it in kN/m"
    sites = SitesViewModel(Store(tmp_path / "s.db"))
    assert sites.create({"name": "Hall", "snow_kpa": "deep"}) is None
    assert sites.errors["snow_kpa"].startswith("snow load: 'deep' is not a number")
    assert "_kpa" not in sites.errors["snow_kpa"]
