"""View models without Kivy: entering values updates the recheck, bad input stays at the field."""

import re

import pytest

from mobile.demo.run import load_demo
from mobile.units import parse_length_mm
from mobile.viewmodels import BeamFormViewModel, SiteViewModel
from storage import Store


@pytest.mark.parametrize(
    ("text", "mm"),
    [
        ("3600", 3600),
        ("3600 mm", 3600),
        ("3.6 m", 3600),
        ("11' 9 3/4\"", (11 * 12 + 9.75) * 25.4),
        ('9 3/4"', 9.75 * 25.4),
        ("12'", 144 * 25.4),
    ],
)
def test_tape_measure_input(text, mm):
    # 1 inch = 25.4 mm exactly (international inch, a fact of the trade)
    assert parse_length_mm(text) == pytest.approx(mm)


def test_bad_length_message():
    with pytest.raises(ValueError, match="feet-inches"):
        parse_length_mm("twelve")


@pytest.fixture
def form(tmp_path):
    store = Store(tmp_path / "vm.db")
    site_id = load_demo(store)
    beam_id = next(i for i, r in store.beams(site_id) if r["mark"] == "RB-1")
    return BeamFormViewModel(store, site_id, beam_id)


def test_purlin_spacing_change_updates_recheck_and_autosaves(form):
    before = form.refresh().bending[0].kl
    assert form.set_field("purlin_spacing_mm", "2.4 m")
    assert form.store.beam_record(form.beam_id)["top_edge"]["spacing_mm"] == 2400
    assert form.result.bending[0].kl < before


def test_invalid_input_message_at_field_kept_as_draft_beam_unchanged(form):
    before = form.store.beam(form.beam_id)
    assert not form.set_field("d_mm", "-5")
    assert "d_mm" in form.errors
    assert form.store.beam(form.beam_id) == before
    assert form.form()["d_mm"] == "-5"  # what was typed is kept and shown back
    assert not form.set_field("spans", "banana")
    assert "spans" in form.errors
    assert form.set_field("d_mm", "494")  # a valid entry clears the draft
    assert form.form()["d_mm"] == "494 mm"
    assert "d_mm" not in form.errors


def test_bearing_toggle_shows_immediate_and_raise(form):
    assert form.set_field("bearing2.rotation", "no")
    assert form.result.status.value == "not_established"
    assert form.immediate_findings()
    number = form.raise_deficiency(0)
    assert number.startswith("D-")
    assert any(number in line for line in SiteViewModel(form.store, form.site_id).open_deficiencies())


def test_undo_last_change(form):
    form.set_field("b_mm", "175")
    assert form.undo()
    assert form.store.beam(form.beam_id).b_mm == 130


def test_site_groups_show_status_words(form):
    groups = dict(SiteViewModel(form.store, form.site_id).groups())
    labels = [label for rows in groups.values() for _, _, label in rows]
    assert any("NOT ESTABLISHED" in x for x in labels)
    assert any("OK" in x for x in labels)


def test_failing_beam_offers_options_for_the_engineer_of_record(form):
    assert not any(key == "remedies" for _t, _u, key in form.panel_lines())  # RB-1 passes
    assert form.set_field("d_mm", "304")
    assert form.refresh().status.value != "ok"
    line = [text for text, _u, key in form.panel_lines() if key == "remedies"]
    assert line
    assert "engineer of record" in line[0]
    options = form.trace_lines("remedies")
    assert len(options) > 1
    assert "engineer of record" in options[0]


def test_unrecorded_fastening_and_use_are_shown_as_not_recorded(form):
    assert form.set_field("top_fastened", "not recorded")
    assert form.set_field("use", "not recorded")
    fields = form.form()
    assert fields["top_fastened"] == "not recorded"
    assert fields["use"] == "not recorded"
    assert any(f.code == "input_assumed" for f in form.refresh().findings)


def test_the_beam_writes_its_recheck_sheet_from_the_record_as_saved(form, tmp_path):
    """The sheet a reviewer takes from the tablet: the saved beam rechecked again, with where its loads came from."""
    import io
    import re

    from pypdf import PdfReader

    form.set_field("purlin_spacing_mm", "1.2 m")
    path = form.write_sheet(tmp_path / "exports", today="2026-12-04")
    assert path.parent == tmp_path / "exports"
    assert re.fullmatch(r"recheck-RB-1-\d{8}-\d{6}\.pdf", path.name), path.name
    text = re.sub(r"\s+", " ", "\n".join(p.extract_text() for p in PdfReader(io.BytesIO(path.read_bytes())).pages))
    site = form.store.site(form.site_id)
    assert f"Recheck sheet: RB-1, {form.result.status.value.upper().replace('_', ' ')}" in text
    assert site.name in text
    assert "Rechecked 2026-12-04 on this tablet" in text
    assert form.loads_note() in text
    assert "Load cases and reactions" in text
    assert "braced by purlins at 1200 mm" in text  # the value just entered: the record as saved


def test_no_recheck_sheet_for_a_beam_that_cannot_be_rechecked_yet(form, tmp_path):
    form.store.update_beam(form.beam_id, {"spans_mm": None})
    with pytest.raises(ValueError, match="no recheck sheet yet: still needs"):
        form.write_sheet(tmp_path / "exports")
    assert not (tmp_path / "exports").exists()


def test_panel_lines_name_the_loads_each_check_is_made_under(form):
    """Deflection is checked under specified loads, strength under factored ones.

    NBC 4.1.3.2 (factored, ULS) and 4.1.3.5 (specified, SLS), from memory: the panel says which, as the
    recheck sheet and the command line do; it said "46.4 mm vs limit 46.7 mm (L/180)" with no load named.
    """
    lines = {key: text for text, _u, key in form.panel_lines() if key}
    assert re.search(r"\(specified (D \+ )?L \+ S\)$", lines["deflection"]), lines["deflection"]
    for key in ["shear", *(k for k in lines if k.startswith("bearing"))]:
        assert re.search(r"\((1\.4D|1\.25D \+ 1\.5[LS])[^()]*(\([^()]*\))?\)$", lines[key]), lines[key]


def test_options_for_the_engineer_of_record_name_what_they_solve_in_words(form):
    """The options popup names the finding each option answers in words, never its stored code.

    A notice and its options go to people, not programs (common practice: no internal identifiers on screen).
    """
    from core.kinds import FindingCode

    assert form.set_field("bearing2.rotation", "no")  # a bearing restraint missing: not established
    lines = form.remedy_lines()
    assert lines
    assert lines[0].startswith("bearing restraint missing: restrain the bearing(s)"), lines[0]
    codes = [c.value for c in FindingCode]
    assert not [line for line in lines if any(code in line for code in codes)], lines
