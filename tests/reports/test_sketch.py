"""The member sketch (reports/sketch.py), shared by the recheck sheet and the notice.

What it must show comes from the trade (common practice on a framing sketch: every brace recorded on
site is drawn where it is, and what was not seen is marked as such and taken as the unfavourable case)
and from CSA O86-19: a purlin braces the compression edge only when fastened to it, and a bearing is
restrained only against both lateral displacement and rotation about the long axis (7.5.6.3.1).
Checked with the text pypdf extracts from the PDF, the drawing's own shapes, and PNG pages to look at.
"""

import io
import itertools
import re

import pytest
from pypdf import PdfReader
from reportlab.graphics.shapes import Line, Rect, String
from reportlab.lib import colors
from reportlab.pdfbase.pdfmetrics import getAscentDescent, stringWidth

from core.recheck import recheck
from reports.content import member_sketch, purlin_x, sketch_for
from reports.render import render_recheck_sheet
from reports.sketch import beam_sketch, register_fonts
from tests.core.beams import glulam
from tests.reports.test_notice import save_pngs

HELD = {"lateral": True, "rotation": True, "length_mm": 140}
UNSEEN = "not_visible"


def _text(pdf: bytes) -> str:
    return re.sub(r"\s+", " ", "\n".join(p.extract_text() for p in PdfReader(io.BytesIO(pdf)).pages))


def _boxes(drawing):
    """Each string's box (x0, y0, x1, y1, text) as drawn: reportlab's own width, ascent and descent."""
    out = []
    for s in drawing.contents:
        if not isinstance(s, String):
            continue
        w = stringWidth(s.text, s.fontName, s.fontSize)
        x0 = {"start": s.x, "middle": s.x - w / 2, "end": s.x - w}[s.textAnchor]
        ascent, descent = getAscentDescent(s.fontName, s.fontSize)
        out.append((x0, s.y + descent, x0 + w, s.y + ascent, s.text))
    return out


def _legend(drawing) -> str:
    """The legend's lines (the strings at the drawing's left edge), top to bottom, as one text."""
    lines = sorted((s for s in drawing.contents if isinstance(s, String) and s.x == 0), key=lambda s: -s.y)
    return " ".join(s.text for s in lines)


def _overprints(drawing):
    """Pairs of strings whose boxes overlap, and strings reaching past the drawing's edges."""
    boxes = _boxes(drawing)
    clash = [
        (a[4], b[4])
        for a, b in itertools.combinations(boxes, 2)
        if a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]
    ]
    outside = [b[4] for b in boxes if b[0] < 0 or b[2] > drawing.width or b[1] < 0 or b[3] > drawing.height]
    return clash + outside


def test_an_unseen_restraint_is_named_under_the_sketch():
    """'R?' alone did not say which restraint was not seen: the legend names it per support, taken as missing."""
    beam = glulam(
        bearings=[
            {"lateral": UNSEEN, "rotation": True, "length_mm": 140},
            {"lateral": True, "rotation": UNSEEN, "length_mm": 140},
        ]
    )
    pdf = render_recheck_sheet(beam, recheck(beam))
    text = _text(pdf)
    assert "S1 R?" in text
    assert "S2 R?" in text
    assert (
        "R? not seen, taken as not restrained: lateral displacement at S1; rotation about the long axis at S2" in text
    )
    save_pngs(pdf, "sketch-unseen-restraint")
    # the Inputs rows say the same of each support (the sketch agrees with them)
    assert "against lateral displacement: not visible (taken as missing)" in text
    assert "against rotation: not visible (taken as missing)" in text
    # a restrained beam's legend names no support
    held = _text(render_recheck_sheet(glulam(), recheck(glulam())))
    assert "R? not seen (taken as not restrained)" in held
    assert "taken as not restrained: lateral" not in held


@pytest.mark.parametrize("width_pt", [460.0, 186 / 25.4 * 72])  # the notice's default and the sheet's width
def test_nothing_in_the_sketch_overprints_with_every_support_unseen(width_pt):
    """Five spans, short ones among them, every bearing unseen in both ways: the legend wraps, nothing overlaps."""
    register_fonts()
    both = {"lateral": UNSEEN, "rotation": UNSEEN, "length_mm": 140}
    beam = glulam(
        spans_mm=[4200, 1500, 6800, 1500, 4200],
        overhang_left_mm=900,
        bearings=[both] * 6,
        top_edge={"braced_by": "purlins", "spacing_mm": 1200},
    )
    drawing = beam_sketch(sketch_for(beam), width_pt=width_pt, height_pt=125)
    assert _overprints(drawing) == []
    legend = _legend(drawing)
    assert "lateral displacement at S1, S2, S3, S4, S5, S6" in legend
    assert "rotation about the long axis at S1, S2, S3, S4, S5, S6" in legend
    assert drawing.height > 125  # grown by the legend's extra lines, not squeezed into the member


def test_purlins_recorded_without_their_fastening_are_drawn_and_taken_as_not_fastened():
    """The 9 m beam of the review: purlins at 2400 mm, fastening not recorded; the sketch drew none.

    It drew purlins only when recorded as fastened. Every purlin recorded is drawn where it is (2400, 4800,
    7200 mm from the left bearing); one not recorded as fastened is hollow, and the legend says it is
    taken as not fastened. The recheck takes it so: a purlin not fastened does not brace the compression
    edge, so Lu is the span (CSA O86-19 7.5.6.4; common practice).
    """
    beam = glulam(spans_mm=[9000], top_edge={"braced_by": "purlins", "spacing_mm": 2400})
    r = recheck(beam)
    assert r.bending[0].lu_mm == pytest.approx(9000)  # not a brace: Lu over the whole span
    pdf = render_recheck_sheet(beam, r)
    text = _text(pdf)
    assert "P1 P2 P3" in text
    assert "P4" not in text  # 4 x 2400 mm is past the 9000 mm span
    assert "□ P purlin, fastening not recorded: taken as not fastened (not a brace)" in text
    assert "■ P purlin" not in text
    save_pngs(pdf, "sketch-purlins-not-recorded")
    register_fonts()
    drawing = beam_sketch(sketch_for(beam), width_pt=460, height_pt=125)
    squares = [s for s in drawing.contents if isinstance(s, Rect) and s.width == 5]
    assert len(squares) == 3
    assert all(s.fillColor == colors.white for s in squares)  # hollow: not taken as fastened
    left, right = 40.0, 460 - 40.0  # the member's ends in the drawing (40 pt margins)
    centres = [(s.x + 2.5 - left) / (right - left) * 9000 for s in squares]
    assert centres == pytest.approx([2400, 4800, 7200])
    assert _overprints(drawing) == []


@pytest.mark.parametrize(
    ("fastened", "fill", "words"),
    [
        (True, colors.black, "■ P purlin, fastened (top-edge brace)"),
        (False, colors.white, "□ P purlin, not fastened (not a brace)"),
    ],
)
def test_purlins_are_solid_only_when_recorded_as_fastened(fastened, fill, words):
    register_fonts()
    beam = glulam(top_edge={"braced_by": "purlins", "spacing_mm": 2400, "fastened": fastened})
    drawing = beam_sketch(sketch_for(beam), width_pt=460, height_pt=125)
    squares = [s for s in drawing.contents if isinstance(s, Rect) and s.width == 5]
    assert len(squares) == 2  # 2400 and 4800 mm on the 7200 mm span
    assert all(s.fillColor == fill for s in squares)
    assert words in _legend(drawing)


@pytest.mark.parametrize(("fastened", "dashed"), [(True, False), (None, True), (False, True)])
def test_decking_is_drawn_dashed_unless_recorded_as_fastened(fastened, dashed):
    register_fonts()
    beam = glulam(top_edge={"braced_by": "decking", "fastened": fastened})
    drawing = beam_sketch(sketch_for(beam), width_pt=460, height_pt=125)
    decking = [s for s in drawing.contents if isinstance(s, Line) and s.strokeWidth == 2]
    assert len(decking) == 1
    assert bool(decking[0].strokeDashArray) is dashed
    legend = _legend(drawing)
    assert ("dashed top line: decking" in legend) is dashed
    assert ("thick top line: decking, fastened" in legend) is not dashed


def _label_centres(pdf: bytes) -> dict[str, float]:
    """The sketch's short labels on page 1 ('P2', 'S1 R') and the x of each one's centre, in the drawing (pt).

    pypdf gives where each label starts; reportlab's width of it in the sketch's font adds half (centred labels).
    """
    register_fonts()
    out: dict[str, float] = {}

    def visit(text, _cm, tm, *_font_and_size):
        label = text.strip()
        if re.fullmatch(r"P\d+|S\d+ (R|NOT R|R\?)", label):
            out[label] = tm[4] + stringWidth(label, "BWSans", 8) / 2

    PdfReader(io.BytesIO(pdf)).pages[0].extract_text(visitor_text=visit)
    return out


ROW = {"braced_by": "purlins", "spacing_mm": 2400, "fastened": True}


@pytest.mark.parametrize(
    ("over", "expected_mm"),
    [
        # 7.2 m span and a 2.8 m cantilever: the row goes on past S2 onto the overhang (9600 mm from S1)
        ({"overhang_right_mm": 2800}, [2400, 4800, 9600]),
        # a 3 m overhang on the left: one spacing back from S1 (600 mm from the tip) as well as along the span
        ({"overhang_left_mm": 3000}, [-2400, 2400, 4800]),
        # a 1.8 m second span, shorter than the spacing: the row crosses S2 and a purlin lands at 7200 mm
        ({"spans_mm": [6000, 1800], "bearings": [HELD] * 3}, [2400, 4800, 7200]),
    ],
)
def test_every_purlin_on_the_member_is_drawn_on_the_sheet(over, expected_mm):
    """Every purlin that bears on the member is drawn, on an overhang and on a span shorter than the spacing.

    Purlins at a recorded spacing bear on the whole member, overhangs too (common practice: one row at one
    spacing), here laid out from S1 as the sketch always was (the first one spacing from it). The sheet drew
    them inside each span only, each span's row started again at its left bearing: a cantilever and a span
    shorter than the spacing showed none. Read back from the PDF: each purlin label's centre, measured from
    S1's label on the scale S1 to S2 sets (the first span's recorded length).
    """
    beam = glulam(top_edge=ROW, **over)
    r = recheck(beam)
    pdf = render_recheck_sheet(beam, r)
    at = _label_centres(pdf)
    scale = beam.spans_mm[0] / (at["S2 R"] - at["S1 R"])  # mm per pt
    purlins = sorted((k for k in at if k.startswith("P")), key=lambda k: int(k[1:]))
    assert [(at[k] - at["S1 R"]) * scale for k in purlins] == pytest.approx(expected_mm, abs=25)  # 1 pt
    save_pngs(pdf, f"sketch-purlins-{'-'.join(map(str, expected_mm))}")
    drawing = beam_sketch(member_sketch(beam, r), width_pt=186 / 25.4 * 72, height_pt=125)
    assert _overprints(drawing) == []


@pytest.mark.parametrize(
    ("elements", "spacing_mm", "expected_mm"),
    [
        # a purlin that would fall exactly on the tip of an overhang, or on a bearing, is not drawn there
        ([("span", 0.0, 7200.0), ("overhang", 7200.0, 2400.0)], 2400, [2400, 4800]),
        ([("span", 0.0, 7200.0), ("overhang", 7200.0, 2401.0)], 2400, [2400, 4800, 9600]),
        ([("overhang", 0.0, 2400.0), ("span", 2400.0, 4800.0)], 2400, [4800]),
        ([("overhang", 0.0, 2401.0), ("span", 2401.0, 4800.0)], 2400, [1, 4801]),
        # 16 in on centre (406.4 mm, 1 in = 25.4 mm exactly): the sixth lands on the bearing 8 ft (2438.4 mm) from S1
        (
            [("span", 0.0, 2438.4), ("span", 2438.4, 1000.0)],
            406.4,
            [406.4, 812.8, 1219.2, 1625.6, 2032.0, 2844.8, 3251.2],
        ),
    ],
)
def test_purlins_on_a_bearing_or_at_the_tip_are_not_drawn(elements, spacing_mm, expected_mm):
    """The ends of the row: on a bearing or an end of the member, nothing; a millimetre inside it, a purlin."""
    assert purlin_x(elements, spacing_mm) == pytest.approx(expected_mm)
