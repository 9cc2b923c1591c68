"""Defects a fresh-eyes review of a large notice (150 and 500 items, photos of every shape) found.

Each test fails on the code before its fix. Sources: a contractor and the engineer of record act on
what is printed, so nothing logged is left out, every page says which notice and page it is, and a
table that starts a page says what it belongs to (common practice for construction documents and
drawing sets); positions and widths are reportlab's own measures (``pdfmetrics.stringWidth``) of the
text pypdf reads back with its transformation matrix.
"""

import io
from dataclasses import replace

from PIL import Image
from pypdf import PdfReader
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.pdfgen import canvas as rl_canvas

from core import recheck
from core.records import Deficiency
from mobile.issue import observed_text
from reports.content import Photo, item_for
from reports.photos import photo_flowable
from reports.render import FONT, HASH_FONT, _styles, render_notice
from tests.core.beams import glulam
from tests.reports.test_notice import _notice, save_pngs

FREE = {"lateral": True, "rotation": False, "length_mm": 140}
HELD = {"lateral": True, "rotation": True, "length_mm": 140}
SIZES = [(2048, 1536), (1536, 2048), (4000, 500), (40, 30), (3000, 2000)]  # landscape, portrait, very wide, tiny


def _jpeg(size, shade=120):
    out = io.BytesIO()
    Image.new("RGB", size, (shade, 110, 140)).save(out, "JPEG", quality=80)
    return out.getvalue()


def _photos(prefix, count):
    return [
        Photo(
            sha256=f"{prefix}{k}",
            load=lambda k=k: _jpeg(SIZES[k % len(SIZES)], 60 + 30 * k),
            caption=f"{prefix} {k + 1}",
        )
        for k in range(count)
    ]


def _item(number="D-AB12-001", photos=(), member_photos=(), title="RB-9 · Roof · grid C / 2-3", **beam):
    b = glulam(mark="RB-9", bearings=[HELD, FREE], **beam)
    d = Deficiency(
        id=number, site_id="s", beam_id="b1", number=number, code="x", priority="immediate",
        location="Roof, grid C / 2-3, RB-9, support 2", description="RB-9 at support 2: no restraint.",
        reference="S-201", action="Install the bearing restraint.",
    )  # fmt: skip
    return item_for(
        d, b, recheck(b), "as built", list(photos), member_title=title, member_photos=list(member_photos),
        gridline="C / 2-3",
    )  # fmt: skip


def _pages(pdf):
    return [p.extract_text() or "" for p in PdfReader(io.BytesIO(pdf)).pages]


# 1. an item's fourth and later photos were left out (the renderer took the first three); a member's too


def test_every_photo_of_an_item_and_of_a_member_is_printed():
    item = _item(photos=_photos("item view", 5), member_photos=_photos("beam view", 4))
    pdf = render_notice(_notice([item]))
    text = " ".join(" ".join(_pages(pdf)).split())
    for k in range(1, 6):
        assert f"Photo {k}: item view {k}" in text
    for k in range(1, 5):
        assert f"Photo {k}: beam view {k}" in text
    images = [
        x
        for p in PdfReader(io.BytesIO(pdf)).pages
        for x in p["/Resources"].get("/XObject", {}).values()
        if x.get_object()["/Subtype"] == "/Image"
    ]
    assert len(images) == 9
    save_pngs(pdf, "notice25-photos")


# 2. the engineering table, when it starts a page, said "Engineering detail" without naming the member


def test_the_engineering_detail_heading_names_its_member():
    pdf = render_notice(_notice([_item()]))
    text = " ".join(" ".join(_pages(pdf)).split())
    assert "Engineering detail, RB-9 · Roof · grid C / 2-3 (for the engineer of record)" in text


# 3. a long site name ran into the footer's hash; a site name in another script printed as empty boxes


def _runs(pdf, page=0, below=20 * mm):
    """(text, x, y, font, size) of every text run whose baseline is below ``below`` on a page."""
    runs = []

    def visit(text, cm, tm, font, size):
        x, y = cm[4] + tm[4] * cm[0], cm[5] + tm[5] * cm[3]
        if text.strip() and y < below:
            runs.append((text, x, y, str((font or {}).get("/BaseFont", "")), size))

    PdfReader(io.BytesIO(pdf)).pages[page].extract_text(visitor_text=visit)
    return runs


def _footer_runs(pdf, page=0):
    """The footer's runs: what is drawn within 25 mm of the page's foot with the footer's 8 pt size."""
    return [r for r in _runs(pdf, page, 25 * mm) if r[4] == 8 and r[2] < 20 * mm]


def _width(text, font):
    return stringWidth(text, HASH_FONT if "Courier" in font else FONT, 8)


def test_a_long_site_name_in_the_footer_stays_clear_of_the_hash_and_the_page_number():
    name = "Harrowgate Cold Storage and Maker Hall, Building C (north annex and the loading dock extension)"
    pdf = render_notice(_notice([_item()], site_name=name), stamp_hash=True)
    runs = _footer_runs(pdf)
    hash_run = next(r for r in runs if r[0].startswith("SHA-256 "))
    page_run = next(r for r in runs if r[0].startswith("page 1 of"))
    left = [r for r in runs if r not in (hash_run, page_run)]
    assert "Building C" in " ".join(r[0] for r in left)  # the name is printed whole (wrapped), not cut
    for y in {r[2] for r in left}:  # each line: its runs side by side from its first run's x
        line = [r for r in left if r[2] == y]
        end = min(r[1] for r in line) + sum(_width(r[0], r[3]) for r in line)
        if abs(y - hash_run[2]) < 8:  # on the hash's line: it ends before the hash starts
            assert end < hash_run[1], line
        assert end < page_run[1], line
    assert len({round(r[2]) for r in left}) > 1  # wrapped onto more than one line
    # the wrapped footer stays below the page's text: the lowest body line sits above the footer's top line
    body = [r for r in _runs(pdf, 0, 1000) if r not in runs]
    assert min(r[2] for r in body) > max(r[2] for r in left) + 8
    save_pngs(pdf, "notice25-footer-long-name")


def test_a_site_name_in_another_script_prints_in_the_footer_in_a_font_that_has_it():
    pdf = render_notice(_notice([_item()], site_name="Harrowgate 冷蔵倉庫 Hall"), stamp_hash=True)
    cjk = [r for r in _footer_runs(pdf) if "冷" in r[0]]
    assert cjk
    assert all("BWSans" not in font and "DejaVu" not in font for _, _, _, font, _ in cjk), cjk


# 4. an item not on a beam printed its description twice (as "Observed" and again as "Finding")


def test_an_item_not_on_a_beam_prints_its_description_once():
    text = "Temporary guard missing at the stair opening. The lumber stack sits on the slab edge."
    d = Deficiency(
        id="o1", site_id="s", number="D-AB12-050", code="reviewer_observation", priority="before_next_review",
        location="Level 2, grid C-D / 2", description=text, reference="Site safety", action="Reinstate it.",
    )  # fmt: skip
    other = Deficiency(**dict(d.model_dump(), id="o2", number="D-AB12-051"))
    pdf = render_notice(_notice([item_for(d, None, None, text), item_for(other, None, None, "seen from the stair")]))
    flat = " ".join(" ".join(_pages(pdf)).split())
    # once per item's Finding (the summary prints only the first sentence)
    assert flat.count("The lumber stack sits on the slab edge.") == 2
    assert "Observed seen from the stair" in flat  # an observation that differs from the finding still prints


# 5. the as-built line said nothing when the top edge was recorded as not braced


def test_the_as_built_line_says_when_the_top_edge_is_not_braced():
    record = glulam(top_edge={"braced_by": "none"}).model_dump(mode="json")
    assert "top edge not braced" in observed_text(record)


# 6. a very wide photo sat at the top of its box, its caption a box-height below it


class _Recording(rl_canvas.Canvas):
    def __init__(self):
        super().__init__(io.BytesIO())
        self.images = []

    def drawImage(self, image, x, y, width=None, height=None, **kw):
        self.images.append((image, x, y, width, height))


def test_a_photo_sits_directly_above_its_caption_whatever_its_shape():
    style = _styles()["small"]
    for size in SIZES:
        flow = photo_flowable(Photo(sha256="w", load=lambda s=size: _jpeg(s), caption="wide"), 1, style)
        _, height = flow.wrap(200 * mm, 200 * mm)
        canv = _Recording()
        flow.canv = canv
        flow.draw()
        (_, _, y, _, h), caption_h = canv.images[0], flow._cap_h
        assert abs(y - (caption_h + 2)) < 0.01, size  # the image's lower edge is 2 pt above the caption
        assert y + h <= height + 0.01


# 7. an item taller than what is left of a page: its rows or its photos went on, or whole, to the next page
# without its number (the heading stayed behind)

SENTENCE = "The hanger seat was packed with a split shim and the beam bears on half its width."


def test_an_item_or_its_photos_on_the_next_page_are_headed_with_its_number():
    for repeats, photos in ((24, 4), (36, 4), (44, 3), (50, 4), (60, 10), (30, 13)):
        item = _item(photos=_photos("nails", photos))
        item = replace(item, finding=item.finding + "\n" + " ".join([SENTENCE] * repeats))
        pages = [" ".join(p.split()) for p in _pages(render_notice(_notice([item])))]
        start = next(i for i, p in enumerate(pages) if p.startswith("Item D-AB12-001"))
        for k, page in enumerate(pages[start:], start):
            shows = any(f"Photo {j}: nails" in page for j in range(1, photos + 1)) or "Action taken" in page
            if shows or SENTENCE in page:
                assert "Item D-AB12-001" in page or "Photos of item D-AB12-001 (continued)" in page, (repeats, k)
            if "D-AB12-001 (continued)" in page and (repeats, photos) != (36, 4):
                # the page before says it goes on (at 36 lines and 4 photos the item's grid, with its response box,
                # fills it to the foot: the heading alone says it)
                assert "D-AB12-001 continue" in pages[k - 1], (repeats, k)
        printed = " ".join(pages)
        assert all(f"Photo {j}: nails {j}" in printed for j in range(1, photos + 1))


def _five_span_item():
    """RB-9: five spans, unbraced, with live load (20 check lines: more than a page), one bearing free."""
    beam = glulam(
        mark="RB-9",
        spans_mm=[4000] * 5,
        bearings=[HELD, FREE, *[HELD] * 4],
        top_edge={"braced_by": "none"},
        loads={"dead_kn_m": 2.0, "live_kn_m": 3.0, "snow_kn_m": 5.0},
    )
    d = Deficiency(
        id="e1", site_id="s", beam_id="b7", number="D-AB12-070", code="x", priority="immediate",
        location="Roof, grid C / 1-6, RB-9", description="RB-9: no restraint.", reference="S-201", action="Fix.",
    )  # fmt: skip
    return item_for(d, beam, recheck(beam), "as built", member_title="RB-9 · Roof · grid C / 1-6")


def test_an_engineering_table_over_a_page_carries_its_member_on_the_next():
    item = _five_span_item()
    pdf = render_notice(_notice([item]))
    pages = [" ".join(p.split()) for p in _pages(pdf)]
    rows = [k for k, p in enumerate(pages) if "under 1.25D" in p]  # pages holding rows of the engineering table
    assert len(rows) > 1
    assert pages[rows[0]].count("Engineering detail, RB-9 · Roof · grid C / 1-6 (for the engineer of record)") == 1
    assert "Engineering detail, RB-9 · Roof · grid C / 1-6 continues on the next page." in pages[rows[0]]
    for k in rows[1:]:
        assert pages[k].startswith("Engineering detail, RB-9 · Roof · grid C / 1-6 (continued) Check Demand Capacity")
    save_pngs(pdf, "notice25-engineering-continued")


# 8. the list of table rows the rechecks used went on over pages under a bare header row


def test_the_table_rows_list_over_pages_says_what_it_is_on_each():
    from core.kinds import TraceStatus
    from reports.tablerows import RowUsed

    rows = [RowUsed(f"CSA O86-19 Table 7.{k}", f"row {k} of a long list", TraceStatus.confirmed) for k in range(90)]
    pages = [" ".join(p.split()) for p in _pages(render_notice(_notice([_item()], table_rows=rows)))]
    holding = [k for k, p in enumerate(pages) if "of a long list" in p]
    assert len(holding) > 1
    assert "Table rows the rechecks used continues on the next page." in pages[holding[0]]
    for k in holding[1:]:
        assert pages[k].startswith("Table rows the rechecks used (continued) Status Clause and row"), k


# 9. the summary did not say where an item's block is: on a 679-page notice the contractor leafed for it


def test_the_summary_gives_the_page_of_each_items_block():
    import re

    from tests.reports.test_notice13 import _twenty_on_five

    pdf = render_notice(_notice(_twenty_on_five()), stamp_hash=True)
    pages = [" ".join(p.split()) for p in _pages(pdf)]
    summary = " ".join(pages[: next(k for k, p in enumerate(pages) if "Items by member" in p)])
    refs = re.findall(r"(D-AB12-\d{3}) p\. (\d+)", summary)
    assert len(refs) == len({n for n, _ in refs}) == 20
    for number, page in refs:
        assert f"Item {number} " in pages[int(page) - 1] + " ", (number, page)
    assert len({page for _, page in refs}) > 5  # not one page for all: the numbers come from the layout


# 10. a status cell cut a word in two ("contracto" / "r"): the summary's cells wrap between words


def test_the_summary_status_wraps_between_words():
    from tests.reports.test_notice13 import _twenty_on_five

    items = [replace(i, status="corrected (contractor reports done), cycle 2") for i in _twenty_on_five()[:3]]
    pages = [" ".join(p.split()) for p in _pages(render_notice(_notice(items)))]
    assert pages[0].count("corrected (contractor reports done), cycle 2") == 3


# 11. the cross of a support that is not restrained reached down into its label ("S2 NOT R")


def test_a_not_restrained_supports_cross_stays_clear_of_its_label():
    from reportlab.graphics.shapes import Line, String
    from reportlab.pdfbase.pdfmetrics import getAscentDescent

    from reports.content import sketch_for
    from reports.sketch import beam_sketch

    _styles()  # the notice's fonts registered, so reportlab can measure the label
    for bearing in (FREE, {"lateral": "not_visible", "rotation": "not_visible", "length_mm": 140}):
        drawing = beam_sketch(sketch_for(glulam(bearings=[HELD, bearing])))
        labels = [s for s in drawing.contents if isinstance(s, String) and s.text.startswith("S2 ")]
        crosses = [s for s in drawing.contents if isinstance(s, Line) and abs(s.x1 - s.x2) == 12]
        assert len(labels) == 1
        assert len(crosses) == 2
        label_top = labels[0].y + getAscentDescent(labels[0].fontName, labels[0].fontSize)[0]
        for line in crosses:
            assert min(line.y1, line.y2) - line.strokeWidth / 2 > label_top, (bearing, line.y1, line.y2, label_top)


# 12. the options were headed "Options that would make it pass" above one that leaves the member failing (1.009)


def test_the_options_heading_does_not_claim_every_option_passes():
    beam = glulam(
        mark="RB-4",
        spans_mm=[7000, 7000],
        d_mm=532,
        bearings=[HELD, dict(FREE, length_mm=280), HELD],
        loads={"dead_kn_m": 3.6, "live_kn_m": 0.0, "snow_kn_m": 7.8},
        top_edge={"braced_by": "purlins", "spacing_mm": 1200, "fastened": True},
    )
    d = Deficiency(
        id="r1", site_id="s", beam_id="b4", number="D-AB12-004", code="x", priority="immediate",
        location="Roof, grid A / 4-5-6, RB-4, support 2", description="RB-4 at support 2: no restraint.",
        reference="S-201", action="Install the restraint.",
    )  # fmt: skip
    item = item_for(d, beam, recheck(beam), "as built", member_title="RB-4 · Roof · grid A / 4-5-6")
    assert any("utilisation then 1.009" in o for o in item.options)  # the recheck's own number, over 1
    text = " ".join(" ".join(_pages(render_notice(_notice([item])))).split())
    assert "would make it pass" not in text
    assert "an option passes only where the utilisation it gives is 1.00 or less" in text


# 13. the "Cautions" heading ended a page with the cautions themselves on the next


def test_the_cautions_heading_is_on_the_page_of_its_cautions():
    from reports.content import CAUTIONS

    # the five-span member of test 11: its notice put "Cautions" last on page 4 and the cautions on page 5
    item = _five_span_item()
    pages = [" ".join(p.split()) for p in _pages(render_notice(_notice([item])))]
    heading = [k for k, p in enumerate(pages) if "Cautions • " + CAUTIONS[0][:40] in p]
    assert len(heading) == 1
    assert all(c[:40] in pages[heading[0]] for c in CAUTIONS)


# 14. a long list of items carried forward went on over pages with neither heading nor header row


def test_the_carried_forward_list_over_pages_says_what_it_is_on_each():
    from reports.content import Carried

    carried = [Carried(f"D-AB11-{k:03d}", "Roof, grid B / 2-3", "Hanger nails missing.", "open") for k in range(80)]
    pages = [" ".join(p.split()) for p in _pages(render_notice(_notice([_item()], carried=carried)))]
    holding = [k for k, p in enumerate(pages) if "D-AB11-0" in p]
    assert len(holding) > 1
    assert "Items carried forward from earlier notices continue on the next page." in pages[holding[0]]
    for k in holding[1:]:
        assert pages[k].startswith(
            "Items carried forward from earlier notices (continued) Item Location Description"
        ), k
