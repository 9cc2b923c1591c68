"""Lengths as typed on site: one parser, plausible ranges, nothing read in a unit the reviewer did not mean.

Conversions are checked against the international inch, 1 in = 25.4 mm exactly (the 1959
international yard and pound agreement); the feet-inches spellings are common practice on
North American tape measures and drawings.
"""

import json
import subprocess
import sys
from pathlib import Path

import pytest

from mobile.demo.run import load_demo
from mobile.units import LengthRefused, echo_length, feet_inches, parse_length, read_length, split_spans
from mobile.viewmodels import BeamFormViewModel
from storage import Store

ROOT = Path(__file__).resolve().parents[2]
INCH = 25.4  # mm, exact


@pytest.mark.parametrize(
    ("text", "mm"),
    [
        ("23' 7 1/2\"", (23 * 12 + 7.5) * INCH),
        ("23'-7 1/2\"", (23 * 12 + 7.5) * INCH),
        ('7-1/2"', 7.5 * INCH),
        ('7½"', 7.5 * INCH),
        ("23 ft 7.5 in", (23 * 12 + 7.5) * INCH),
        ("23′ 7″", (23 * 12 + 7) * INCH),
        ('5 1/8"', 5.125 * INCH),
        ("3,9 m", 3900.0),  # a decimal comma is a decimal point
        ("3.9 m", 3900.0),
        ("456 mm", 456.0),
        ("45.6 cm", 456.0),
    ],
)
def test_spellings_of_a_length(text, mm):
    value, unit_typed = parse_length(text)
    assert value == pytest.approx(mm)
    assert unit_typed


def test_a_bare_number_is_read_in_mm_and_says_no_unit_was_typed():
    assert parse_length("7200") == (7200.0, False)


@pytest.mark.parametrize(
    ("kind", "text", "suggestion"),
    [
        ("span_mm", "3.9", "3.9 m"),  # the span typed in metres without a unit
        ("span_mm", "3,9", "3.9 m"),
        ("spacing_mm", "2.4", "2.4 m"),
    ],
)
def test_a_metre_value_typed_without_unit_is_refused_with_a_question(kind, text, suggestion):
    with pytest.raises(LengthRefused, match="Did you mean") as err:
        read_length(kind, text)
    assert err.value.suggestion == suggestion
    assert "3.9 mm" in str(err.value) or "2.4 mm" in str(err.value)  # what was understood


@pytest.mark.parametrize(
    ("kind", "text", "allowed"),
    [
        ("b_mm", "400", "25 mm to 365 mm"),
        ("d_mm", "3 m", "38 mm to 2.128 m"),
        ("span_mm", "41 m", "300 mm to 40 m"),
    ],
)
def test_outside_the_plausible_range_is_refused_naming_the_range(kind, text, allowed):
    with pytest.raises(LengthRefused, match=allowed):
        read_length(kind, text)


def test_spacing_cannot_exceed_the_span():
    with pytest.raises(LengthRefused, match=r"100 mm to 7\.2 m"):
        read_length("spacing_mm", "8 m", high_mm=7200)


def test_spans_are_separated_by_semicolons_never_commas():
    assert split_spans("7,2 m; 23' 7 1/2\"") == ["7,2 m", "23' 7 1/2\""]
    assert split_spans("3,9") == ["3,9"]


@pytest.mark.parametrize(
    ("mm", "text"),
    [(7200.9, "23' 7 1/2\""), (190.5, '7 1/2"'), (3657.6, "12' 0\""), (130.175, '5 1/8"')],
)
def test_feet_inches_echo(mm, text):
    assert feet_inches(mm) == text


def test_echo_names_both_units():
    assert echo_length(7200.9) == "7200.9 mm = 23' 7 1/2\""


@pytest.fixture
def form(tmp_path):
    store = Store(tmp_path / "u.db")
    site_id = load_demo(store)
    beam_id = next(i for i, r in store.beams(site_id) if r["mark"] == "RB-1")
    return BeamFormViewModel(store, site_id, beam_id)


def test_form_never_rechecks_a_span_it_misunderstood(form):
    before = form.record()["spans_mm"]
    assert not form.set_field("spans", "3.9")
    assert form.record()["spans_mm"] == before  # the value in force is unchanged
    assert form.suggestions["spans"] == "3.9 m"
    assert "Did you mean 3.9 m?" in form.errors["spans"]
    assert form.set_field("spans", form.suggestions["spans"])
    assert form.record()["spans_mm"] == [3900.0]
    assert form.form()["spans"] == "3900 mm"
    assert form.echo("spans") == "= 3900 mm = 12' 9 9/16\""  # 3900 / 25.4 = 153.54 in = 12 ft 9.54 in


def test_form_purlins_in_metres_without_unit_are_refused(form):
    kl = form.refresh().bending[0].kl
    assert not form.set_field("purlin_spacing_mm", "2.4")
    assert form.refresh().bending[0].kl == kl
    assert "Did you mean 2.4 m?" in form.errors["purlin_spacing_mm"]


def test_form_feet_inches_echoed_with_unit(form):
    assert form.set_field("spans", "23' 7 1/2\"")
    assert form.form()["spans"] == "7200.9 mm"
    assert form.echo("spans") == "= 7200.9 mm = 23' 7 1/2\""


def test_several_spans_echoed_each_held_whole(form):
    # 7200 mm = 283.46 in = 23' 7 7/16"; 6000 mm = 236.22 in = 19' 8 1/4"; 4800 mm = 188.98 in = 15' 9" (1/16" steps)
    assert form.set_field("spans", "7200; 7200; 6000; 4800")
    echo = form.echo("spans")
    assert echo.replace("\u00a0", " ") == (
        "= 7200 mm = 23' 7 7/16\";  7200 mm = 23' 7 7/16\";  6000 mm = 19' 8 1/4\";  4800 mm = 15' 9\""
    )
    # a line of the echo breaks only between spans: '15\'' over '9"' read as 15 feet
    assert [" " in one for one in echo.removeprefix("= ").split(";  ")] == [False] * 4


@pytest.mark.parametrize(
    ("text", "mm"),
    [
        ('16"', 16 * INCH),  # joists at 16 in on centre: their tributary width
        ("1' 4\"", 16 * INCH),
        ("2.4", 2400.0),  # a bare number is read in the field's unit, m
        ("2,4", 2400.0),
        ("2400 mm", 2400.0),
        ("16", 16_000.0),  # 16 m is inside 0.1 m to 20 m (core.plausible): taken, and echoed in feet-inches
    ],
)
def test_the_tributary_width_takes_every_spelling_of_a_length_in_metres(text, mm):
    assert read_length("tributary_m", text) == pytest.approx(mm)


@pytest.mark.parametrize(
    ("text", "suggestion", "said"),
    [
        ("400", "400 mm", "tributary width: 400 read as 400 m (no unit typed); allowed 0.1 m to 20 m"),
        ("0.05", "", "tributary width: 0.05 read as 0.05 m (no unit typed); allowed 0.1 m to 20 m"),
        ("50 mm", "", "tributary width: 50 mm read as 0.05 m; allowed 0.1 m to 20 m"),
        ("70'", "", "tributary width: 70' read as 21.336 m; allowed 0.1 m to 20 m"),
    ],
)
def test_an_implausible_tributary_width_is_refused_in_words_with_a_question(text, suggestion, said):
    with pytest.raises(LengthRefused) as err:
        read_length("tributary_m", text)
    assert str(err.value).startswith(said)
    assert err.value.suggestion == suggestion
    assert ("Did you mean 400 mm?" in str(err.value)) == bool(suggestion)


def test_a_tributary_width_that_is_not_a_length_is_refused_in_the_fields_words():
    with pytest.raises(LengthRefused, match=r"^tributary width: '16x' is not a length: enter m \(3\.6\), mm"):
        read_length("tributary_m", "16x")


def test_form_reads_the_tributary_width_in_feet_inches_and_echoes_it(form):
    assert form.set_field("tributary_m", "16")  # a bare 16 is 16 m: inside the range, so taken, and said so
    assert form.echo("tributary_m").startswith("= 16 m = 52' 5 15/16\";")  # 16000 / 25.4 = 629.92 in
    assert form.set_field("tributary_m", '16"'), form.errors
    assert form.record()["tributary_m"] == pytest.approx(0.4064)
    assert form.form()["tributary_m"] == "0.4064"
    assert form.echo("tributary_m").startswith("= 0.4064 m = 1' 4\";")
    assert not form.set_field("tributary_m", "400")
    assert form.record()["tributary_m"] == pytest.approx(0.4064)  # the value in force
    assert "tributary_m" not in form.errors["tributary_m"]  # the field's words, not its internal name
    assert form.errors["tributary_m"].endswith("Did you mean 400 mm?")
    assert form.set_field("tributary_m", form.suggestions["tributary_m"])
    assert form.record()["tributary_m"] == pytest.approx(0.4)


def _check(tmp_path, **changes):
    beam = json.loads((ROOT / "examples" / "beam_r2_b4.json").read_text())
    beam.update(changes)
    path = tmp_path / "b.json"
    path.write_text(json.dumps(beam))
    return subprocess.run(
        [sys.executable, "-m", "mobile.cli", "check", str(path)], capture_output=True, text=True, cwd=ROOT, timeout=120
    )


def test_cli_json_uses_the_same_ranges(tmp_path):
    proc = _check(tmp_path, spans_mm=[3.9])
    assert proc.returncode == 2
    assert "spans_mm[0] = 3.9 mm" in proc.stderr
    assert "300 mm to 40 m" in proc.stderr
    top = json.loads((ROOT / "examples" / "beam_r2_b4.json").read_text())["top_edge"]
    proc = _check(tmp_path, top_edge=dict(top, spacing_mm=2.4))
    assert proc.returncode == 2
    assert "top_edge.spacing_mm = 2.4 mm" in proc.stderr
