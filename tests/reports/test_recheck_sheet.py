"""The recheck sheet: one beam's inputs in words, every check, every factor of every check with its clause."""

import io
import itertools
import re

import pytest
from pypdf import PdfReader

from core.recheck import recheck
from core.results import check_lines, check_trace
from reports.inputs import input_rows
from reports.render import render_recheck_sheet
from tests.core.beams import glulam, sawn
from tests.reports.test_notice import save_pngs
from tests.validation.test_pycba_analysis import _pycba


def text_of(pdf: bytes) -> str:
    return "\n".join(p.extract_text() for p in PdfReader(io.BytesIO(pdf)).pages)


def flat(text: str) -> str:
    """The text with its line breaks and runs of spaces as one space (table cells wrap)."""
    return re.sub(r"\s+", " ", text)


def test_every_check_has_its_own_trace_on_the_sheet():
    beam = glulam()
    r = recheck(beam)
    text = flat(text_of(render_recheck_sheet(beam, r, "Maple Street Hall")))
    # the bending factors (CSA O86-19 7.5.6): KD, KZbg, CB, CK, KL, Mr; and the other checks' own factors
    for symbol in ("KD", "KZbg", "CB", "CK", "KL", "Mr", "Le", "Ab", "KB", "ES", "L/180"):
        assert symbol in text, symbol
    for c in check_lines(r):  # a heading per check, each with a trace table
        assert c.name[:1].upper() + c.name[1:] in text, c.name
        assert check_trace(r, c.key), c.key
    # handbook simple-span moment: Mf = w L^2 / 8, w = 1.25 (2.0 + self-weight) + 1.5 x 5.0 kN/m
    # (NBC 2020 Table 4.1.3.2-A load case 2; glulam self-weight 4.9 kN/m3, from memory)
    w = 1.25 * (2.0 + 4.9 * 0.130 * 0.456) + 1.5 * 5.0
    assert f"Mf {w * 7.2**2 / 8:.1f} kN·m" in text
    assert "Maple Street Hall" in text
    assert "engineer of record" in text
    for clause in ("7.5.6.4.4", "7.5.7.2", "7.5.9", "5.4.2"):  # bending, shear, bearing, deflection
        assert f"CSA O86-19 {clause}" in text, clause
    assert re.search(r"\b(memory|confirmed|verified)\b", text)
    # units and formulas as an engineer writes them (the recheck's JSON keeps ASCII: mm2, b^2, sqrt, x)
    assert "√(Le d / b²)" in text  # CSA O86-19 7.5.6.4.3
    assert "mm²" in text
    assert "4.9 kN/m³ × b × d" in text
    for ascii_form in ("mm2", "b^2", "sqrt(", " x ", "phi", " <= "):
        assert ascii_form not in text, ascii_form
    assert "Vr = φ Fv 2A/3, φ = 0.9" in text  # CSA O86-19 7.5.7.2, as the shear trace writes it


def test_inputs_are_in_words_and_what_was_not_seen_says_the_case_taken():
    """Unseen restraint taken as missing; the weaker layup face; an unrecorded fastening or use: the strict case."""
    beam = glulam(
        bearings=[
            {"lateral": False, "rotation": True, "length_mm": 140},
            {"lateral": True, "rotation": "not_visible", "length_mm": 140},
        ],
        top_edge={"braced_by": "purlins", "spacing_mm": 2400},
        top_stamp="not_visible",
        use=None,
        spans_mm=[9000],
    )
    r = recheck(beam)
    pdf = render_recheck_sheet(beam, r)
    text = flat(text_of(pdf))
    assert "Recheck sheet: T-1, NOT ESTABLISHED" in text
    first = r.findings[0]  # why, under the title: the count to act on and the most urgent finding
    assert re.search(
        rf"NOT ESTABLISHED .{{0,80}}? \d+ findings to act on; the most urgent: "
        rf"▲ IMMEDIATE: {re.escape(first.message[:30])}",
        text,
    )
    # the capacity if restrained is an upper bound, so its utilisation is a lower bound of the real one
    (region,) = r.bending
    upper = region.utilisation_if_restrained
    assert upper is not None
    assert upper > 1.0  # 9 m: fails even at the bound
    # on the inputs as recorded and the unfavourable cases taken for what was not seen (named under Inputs)
    assert f"at least {upper:.3f}: fails even if restrained, on the inputs as recorded and taken" in text
    assert "not established, fails even if its bearings were restrained (on the inputs as recorded and taken)" in text
    short = beam.model_copy(update={"spans_mm": [4000.0]})
    (region,) = recheck(short).bending
    assert region.utilisation_if_restrained is not None
    assert region.utilisation_if_restrained <= 1.0  # 4 m: the bound passes, the real capacity is unknown
    short_text = flat(text_of(render_recheck_sheet(short, recheck(short))))
    assert f"not established; at least {region.utilisation_if_restrained:.3f}" in short_text
    assert "fails even if" not in short_text
    assert "against lateral displacement: NOT restrained" in text
    assert "against rotation: not visible (taken as missing)" in text
    assert "fastening not recorded: taken as not fastened" in text
    assert "the weaker of the layup's two bending strengths taken" in text
    assert "not recorded: the strictest deflection limit taken" in text
    # the inputs and findings carry no raw field names or Python values (trace sources quote the recheck's lines)
    inputs = text[text.index("Inputs as recorded") : text.index("Load cases and reactions")]
    findings = text[text.index("Findings") :]
    for raw in ("b_mm", "spans_mm", "True", "None", "{'", "not_visible", "before_loading", "_"):
        assert raw not in inputs, raw
        assert raw not in findings, raw
    # findings with the priority in words and shape, the action and the clause (O86-19 7.5.6.3.1: d/b > 2.5)
    assert "▲ IMMEDIATE, support 1 (left end): T-1 at support 1" in text
    assert "CSA O86-19 7.5.6.3.1" in text
    assert "Action:" in text
    save_pngs(pdf, "recheck-sheet")


def test_the_sheet_lists_the_load_cases_tried_and_the_reactions():
    """A reviewer checking by hand sees every case the recheck chose among and what each support carries.

    Simple span: R = wL/2 for each case (any beam handbook); the governing case of every check is marked.
    """
    beam = glulam(loads={"dead_kn_m": 2.0, "live_kn_m": 1.5, "snow_kn_m": 5.0})
    r = recheck(beam)
    pdf = render_recheck_sheet(beam, r)
    text = flat(text_of(pdf))
    section = text[text.index("Load cases and reactions") : text.index("Checks Check Demand")]
    assert "all are listed" in section
    dead = 2.0 + 4.9 * 0.130 * 0.456  # glulam self-weight 4.9 kN/m3 (from memory)
    # specified reactions by load type, D L S, at support 1: wL/2 each
    assert f"1 0.00 m {dead * 3.6:.1f} {1.5 * 3.6:.1f} {5.0 * 3.6:.1f}" in section
    # 1.4D (NBC 2020 Table 4.1.3.2.-A case 1): R = 1.4 D L / 2, on both supports
    assert f"{1.4 * dead * 3.6:.1f} / {1.4 * dead * 3.6:.1f}" in section
    # each check's governing case is marked with the check's own demand, and the check names its case number
    for c in check_lines(r):
        if c.name.startswith(("bending", "shear", "bearing")):
            assert f"governs {c.name}: {c.demand}" in section, c.name
            assert re.search(rf"governing: {re.escape(c.combination)} \(load case \d+\)", text), c.name
    assert "Wind and earthquake are not recorded and not checked" in section
    bearing_qf = r.bearing[0].qf_kn
    assert f"{bearing_qf:.1f} (case" in section  # the largest factored reaction is the bearing check's Qf

    continuous = glulam(
        spans_mm=[5200, 7400, 4600],
        overhang_right_mm=1800,
        bearings=[{"lateral": True, "rotation": True, "length_mm": 140}] * 4,
        loads={"dead_kn_m": 1.2, "live_kn_m": 2.4, "snow_kn_m": 3.1},
    )
    pdf = render_recheck_sheet(continuous, recheck(continuous))
    text = flat(text_of(pdf))
    found = re.search(r"(\d+) load cases tried, .*?; the (\d+) listed give an extreme", text)
    assert found
    assert int(found.group(2)) < int(found.group(1))
    # uplift at the left end: span 2 alone carrying 1.25D + 1.5S + 0.5L, 0.9D elsewhere (NBC 2020 Table
    # 4.1.3.2.-A case 3, 0.9D where dead load relieves), solved by pycba 1.0.2; the sheet's least reaction
    # over every case is at most that
    dead = 1.2 + 4.9 * 0.130 * 0.456
    high, low = 1.25 * dead + 1.5 * 3.1 + 0.5 * 2.4, 0.9 * dead
    lifted = float(_pycba([5.2, 7.4, 4.6], 0.0, 1.8, [low, high, low, low]).R[0])
    least = float(re.search(r"Factored, least 1 0\.00 m \S+ \S+ \S+ \S+ \(case \d+\) (-?[\d.]+) \(case", text).group(1))
    assert lifted < 0
    assert least <= round(lifted, 1) + 0.05
    save_pngs(pdf, "recheck-sheet-continuous")


def test_every_input_field_has_a_row():
    """A field added to the beam model without a row here would be rechecked but not shown: refused."""
    from core.models import Beam

    shown = {
        label
        for label, _ in input_rows(sawn(specified={"b_mm": 38, "d_mm": 286, "species": "S-P-F", "grade": "No.1/No.2"}))
    }
    covered = {
        "mark": "Mark",
        "material": "Material",
        "species": "Species and grade",
        "grade": "Species and grade",
        "b_mm": "Size as measured (b × d)",
        "d_mm": "Size as measured (b × d)",
        "spans_mm": "Spans",
        "bearings": "Support 1 (left end)",
        "top_edge": "Top edge",
        "loads": "Line loads (specified)",
        "overhang_left_mm": "Overhangs (left, right)",
        "overhang_right_mm": "Overhangs (left, right)",
        "bottom_edge": "Bottom edge",
        "le_case": "Effective length (CSA O86-19 Table 7.4 row)",
        "service": "Service condition",
        "treatment": "Treatment",
        "top_stamp": "Top stamp",  # glulam only: sawn lumber has no layup
        "self_weight": "Line loads (specified)",
        "use": "Use",
        "negative_lu": "Lu where the bottom edge is in compression",
        "dead_load_pattern": "Dead load where it relieves",
        "specified": "As specified",  # with the tolerance it is compared within
        "system": "System",
        "bridging_spacing_mm": "Bridging spacing",
        "size_tolerance_mm": "As specified",
    }
    assert set(covered) == set(Beam.model_fields)
    assert {v for k, v in covered.items() if k != "top_stamp"} <= shown
    assert "Top stamp" in {label for label, _ in input_rows(glulam())}


def _checks_table(text: str) -> str:
    """The sheet's checks table, from its header to the first check's own section."""
    start = text.index("Checks Check Demand Capacity Utilisation Clause")
    return text[start : text.index("rests on", start)]


def test_uplift_has_its_own_failing_row_in_the_checks_table():
    """A beam deficient only through uplift showed no failing row: the uplift is a row of its own.

    6.0 m span with a 2.8 m overhang, the bottom edge braced: every check passes, but with the overhang
    carrying 1.25D + 1.5S and the span 0.9D (NBC 2020 Table 4.1.3.2.-A case 3, 0.9D where dead load
    relieves) the left support lifts. By statics (moments about support 2), R1 = w_s L / 2 - w_o a^2 / (2 L);
    the same from pycba. Dead load includes the glulam self-weight at 4.9 kN/m3 (common practice, from memory).
    """
    from core.kinds import FindingCode

    beam = glulam(
        spans_mm=[6000],
        overhang_right_mm=2800,
        bottom_edge={"braced_by": "braces", "spacing_mm": 1200},
        loads={"dead_kn_m": 1.0, "live_kn_m": 0.0, "snow_kn_m": 4.0},
    )
    r = recheck(beam)
    assert r.status.value == "deficient"
    assert all(c.utilisation is not None and c.utilisation <= 1.0 for c in check_lines(r))  # no check fails
    assert {f.code for f in r.findings if f.priority.value != "observation"} == {FindingCode.uplift_at_support}
    dead = 1.0 + 4.9 * 0.130 * 0.456
    w_span, w_overhang = 0.9 * dead, 1.25 * dead + 1.5 * 4.0
    r1 = w_span * 6.0 / 2 - w_overhang * 2.8**2 / (2 * 6.0)
    assert float(_pycba([6.0], 0.0, 2.8, [w_span, w_overhang]).R[0]) == pytest.approx(r1, rel=1e-6)
    assert r1 < 0
    pdf = render_recheck_sheet(beam, r)
    table = _checks_table(flat(text_of(pdf)))
    # right after its bearing's row, before the next support's
    found = re.search(
        r"bearing, support 1 Qf (?:(?!support 2).)*? "  # the bearing row's own cells, whatever its clause's wording
        r"uplift, support 1 factored uplift (\d+\.\d) kN \(load case (\d+)\) (.*?) bearing, support 2",
        table,
    )
    assert found, table
    assert found.group(1) == f"{-r1:.1f}"  # 1.5 kN
    row = found.group(3)
    assert "hold-down not recorded: not checked" in row
    assert "This uplift comes from gravity loads alone (live or snow load on the parts that lift" in row
    assert "wind and earthquake, not checked here, would add to it" in row
    assert "the engineer of record must check the hold-down" in row
    # snow lifts it and nobody on site can keep snow off (common practice): a hold-down is needed now
    assert "needs a hold-down now: snow can lift it at any time" in row
    assert "dead load alone" not in row  # the dead load alone does not lift it: R1 under D alone is positive
    assert dead * 6.0 / 2 - dead * 2.8**2 / (2 * 6.0) > 0
    # under specified loads (D + S on the overhang, no factor) R1 stays positive by statics, so no specified uplift
    assert dead * 6.0 / 2 - (dead + 4.0) * 2.8**2 / (2 * 6.0) > 0
    assert "specified" not in row
    assert "NBC 4.1.3.2" in row  # the uplift finding's clause
    # the load case it names is the one that lifts support 1 the most, in the sheet's own case table
    case = re.search(
        rf"\b{found.group(2)} (1\.25D \+ 1\.5S \(1\.25D and L/S on overhang right; 0\.9D on span 1\))",
        flat(text_of(pdf)),
    )
    assert case, found.group(2)
    save_pngs(pdf, "recheck-sheet-uplift")
    # a beam that does not lift has no such row
    assert "uplift, support" not in _checks_table(flat(text_of(render_recheck_sheet(glulam(), recheck(glulam())))))


def test_an_uplift_the_dead_load_alone_causes_says_a_hold_down_is_needed_now():
    """Two spans, 7.2 m and 2.4 m: the short end span's support lifts under dead load alone.

    Figures from pycba 1.0.2: the least reaction at support 3 is under 1.25D + 1.5S on span 1 and 0.9D on
    span 2 (NBC 2020 Table 4.1.3.2.-A case 3); under the specified dead load alone it is already negative.
    """
    beam = glulam(
        spans_mm=[7200, 2400],
        bearings=[{"lateral": True, "rotation": True, "length_mm": 140}] * 3,
        bottom_edge={"braced_by": "braces", "spacing_mm": 1200},
        loads={"dead_kn_m": 1.0, "live_kn_m": 0.0, "snow_kn_m": 4.0},
    )
    dead = 1.0 + 4.9 * 0.130 * 0.456
    assert float(_pycba([7.2, 2.4], 0.0, 0.0, [dead, dead]).R[2]) < 0  # lifts under D alone
    lifted = float(_pycba([7.2, 2.4], 0.0, 0.0, [1.25 * dead + 1.5 * 4.0, 0.9 * dead]).R[2])
    table = _checks_table(flat(text_of(render_recheck_sheet(beam, recheck(beam)))))
    found = re.search(
        r"uplift, support 3 factored uplift (\d+\.\d) kN .*? needs a hold-down now: the dead load alone lifts it", table
    )
    assert found, table
    assert float(found.group(1)) == pytest.approx(-lifted, abs=0.05)
    assert "uplift, support 1" not in table
    assert "uplift, support 2" not in table


def test_a_volume_method_sheet_says_w_against_wr_in_engineering_notation():
    """CSA O86-19 7.5.7.3(a): a glulam of volume Z >= 2.0 m³ sets the total factored load W against Wr.

    215 × 1140 over 12 m: Z = 0.215 × 1.140 × 12 = 2.94 m³ (arithmetic), so the volume method applies.
    """
    beam = glulam(b_mm=215, d_mm=1140, spans_mm=[12000])
    r = recheck(beam)
    text = flat(text_of(render_recheck_sheet(beam, r)))
    assert f"Wf {r.shear.vf_kn:.1f} kN (total factored load)" in text
    assert "rests on volume: Wr vs total factored load W (Z ≥ 2.0 m³)" in text
    assert "Wr = φ Fv 0.48 A CV Z^-0.18" in text
    for ascii_form in (">=", " m3", "phi"):
        assert ascii_form not in text, ascii_form


def test_no_finding_is_split_across_pages():
    """A finding's message and its action are read together (common practice for a site instruction): one page each.

    Short glulam roof beams with purlin fastening not recorded, with and without a bearing restraint missing:
    with the sheet's length, their findings used to break mid-sentence onto the next page (found by rendering
    every combination of span, TOP stamp, use, restraint and bracing).
    """
    beams = [
        glulam(
            spans_mm=[span],
            top_edge={"braced_by": "purlins", "spacing_mm": 2400},
            top_stamp=stamp,
            bearings=[{"lateral": lateral, "rotation": True, "length_mm": 140}] * 2,
        )
        for span, stamp, lateral in ((6000, "up", False), (6000, "up", True), (7200, "not_visible", False))
    ]
    for beam in beams:
        r = recheck(beam)
        assert r.findings
        pages = [flat(p.extract_text()) for p in PdfReader(io.BytesIO(render_recheck_sheet(beam, r))).pages]
        for f in r.findings:
            head, action = flat(f.message)[:60], flat(f.action)[-40:]
            on = [i for i, text in enumerate(pages) if head in text and action in text]
            assert on, (f.code, head)


HELD = {"lateral": True, "rotation": True, "length_mm": 140}
FREE = {"lateral": False, "rotation": True, "length_mm": 140}
FOOTER = re.compile(r"recheck sheet \S+ page \d+ of \d+")


def _review_beams():
    """The four beams of the last review, as their beam files record them."""
    return [
        glulam(b_mm=215, d_mm=1140, spans_mm=[12000]),  # shear by volume (CSA O86-19 7.5.7.3)
        glulam(spans_mm=[9000], bearings=[FREE, HELD], top_edge={"braced_by": "purlins", "spacing_mm": 2400}),
        glulam(
            spans_mm=[6000],
            overhang_right_mm=2800,
            top_edge={"braced_by": "decking", "fastened": True},
            loads={"dead_kn_m": 0.5, "live_kn_m": 0.0, "snow_kn_m": 9.0},
        ),
        sawn(top_stamp="not_visible"),
    ]


def _swept_beams():
    """Glulam roof beams 4 to 12 m and sawn joists, with and without an overhang, with 0 to 4 findings."""
    glulams = [
        glulam(spans_mm=[span], overhang_right_mm=overhang, top_edge=top, bearings=[bearing, HELD])
        for span, overhang, top, bearing in itertools.product(
            (4000, 6000, 9000, 12000),
            (0, 2800),
            (
                {"braced_by": "purlins", "spacing_mm": 2400, "fastened": True},
                {"braced_by": "decking", "fastened": True},
            ),
            (HELD, FREE),
        )
    ]
    joist = {"length_mm": 89}
    sawns = [
        sawn(spans_mm=[span], overhang_right_mm=overhang, bearings=[{**bearing, **joist}, {**HELD, **joist}])
        for span, overhang, bearing in itertools.product((2400, 3600, 5400), (0, 600), (HELD, FREE))
    ]
    return _review_beams() + glulams + sawns


def test_the_signature_block_never_sits_alone_on_the_last_page():
    """A signature is kept on a page with what it closes (common practice for a sealed document).

    The deep glulam of the review (shear by the volume method) ended on a page holding only the closing
    caution and the signature boxes; so did 9 of the 48 sheets here (46 of 292 in a wider sweep), with 0 or
    3 findings. Every sheet must end on a page that also carries the end of the findings: the last finding's
    action, or "None." under the Findings heading.
    """
    orphaned = []
    for beam in _swept_beams():
        r = recheck(beam)
        pages = PdfReader(io.BytesIO(render_recheck_sheet(beam, r))).pages
        last = flat(FOOTER.sub("", flat(pages[-1].extract_text())))
        closing = flat(r.caution)
        assert closing in last  # the caution and the boxes close the sheet, whole
        assert "Checked by Date Signature" in last
        rest = flat(last.replace(closing, "").replace("Checked by Date Signature", "")).strip()
        end = flat(r.findings[-1].action)[-40:] if r.findings else "Findings None."
        if not rest or end not in last:
            orphaned.append((beam.material, beam.spans_mm, beam.overhang_right_mm, len(r.findings or []), rest[:60]))
    assert orphaned == []


def test_a_failing_check_is_marked_fails_in_the_checks_table():
    """A utilisation over 1.0 fails (CSA O86-19: the factored effect may not exceed the factored resistance).

    The sheet printed '3.543' for the joist whose notice item read '3.54 FAILS'; a figure alone is easy to misread.
    """
    beam = sawn(
        spans_mm=[3900],
        top_edge={"braced_by": "decking", "fastened": False},
        loads={"dead_kn_m": 0.6, "live_kn_m": 0.96, "snow_kn_m": 0.0},
    )
    r = recheck(beam)
    text = flat(text_of(render_recheck_sheet(beam, r, "Test site")))
    failing = [c for c in check_lines(r) if c.utilisation is not None and c.utilisation > 1.0]
    passing = [c for c in check_lines(r) if c.utilisation is not None and c.utilisation <= 1.0]
    assert failing
    assert passing
    for c in failing:
        assert f"{c.utilisation:.3f} FAILS" in text
    for c in passing:
        assert f"{c.utilisation:.3f} FAILS" not in text
