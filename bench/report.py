"""Notice rendering: a 10-item and a 100-item deficiency notice, each item with a photo.

Measured: `reports.render.render_notice` on a notice whose items carry the full content (location,
observed, finding, reference, action, priority, due, key recheck numbers, the beam sketch) and one
3-megapixel JPEG each (distinct images, so nothing is shared), downscaled with Pillow as issued.

Baseline, same run: a bare reportlab Platypus document with the same paragraphs and the same photo
bytes placed as-is (reportlab embeds a JPEG without decoding it), under the same process-wide
reportlab settings (binary streams, see reports/render.py): no tables, no sketch, no
downscaling, no page X of Y. The ratio is render time / bare time.
"""

from __future__ import annotations

import io
from functools import partial

from PIL import Image, ImageDraw
from reportlab.lib.pagesizes import LETTER
from reportlab.lib.styles import getSampleStyleSheet
from reportlab.lib.units import mm
from reportlab.platypus import Image as RLImage
from reportlab.platypus import Paragraph, SimpleDocTemplate, Spacer

from bench.common import Row, fmt_time, measure
from core import recheck
from core.models import Beam
from core.records import Deficiency
from reports.content import Item, Notice, item_for
from reports.render import esc, render_notice

PHOTO_PX = (2048, 1536)


def photo(i: int) -> bytes:
    """A distinct 3 MP JPEG (a gradient with a label), as a tablet camera might store it."""
    img = Image.new("RGB", PHOTO_PX, (90 + i % 120, 110, 140))
    draw = ImageDraw.Draw(img)
    for y in range(0, PHOTO_PX[1], 16):
        draw.line([(0, y), (PHOTO_PX[0], (y * 3 + i * 7) % PHOTO_PX[1])], fill=(200, 180 - i % 90, 120), width=5)
    draw.text((60, 60), f"bench photo {i}", fill=(255, 255, 255))
    out = io.BytesIO()
    img.save(out, "JPEG", quality=85)
    return out.getvalue()


def items(count: int) -> list[Item]:
    """Items from a real recheck of a beam with an unrestrained bearing (the demo's kind of finding)."""
    beam = Beam.model_validate(
        {
            "mark": "B",
            "material": "glulam",
            "species": "D.Fir-L",
            "grade": "24f-E",
            "b_mm": 130,
            "d_mm": 456,
            "spans_mm": [7200],
            "bearings": [
                {"lateral": True, "rotation": True, "length_mm": 140},
                {"lateral": True, "rotation": False, "length_mm": 140},
            ],
            "top_edge": {"braced_by": "purlins", "spacing_mm": 2400, "fastened": True},
            "loads": {"dead_kn_m": 2.0, "live_kn_m": 0.0, "snow_kn_m": 5.0},
        }
    )
    result = recheck(beam)
    finding = result.findings[0]
    out = []
    for n in range(1, count + 1):
        d = Deficiency(
            id=f"d{n}",
            site_id="s",
            number=f"D-BNCH-{n:03d}",
            code=finding.code,
            priority=finding.priority.value,
            location=f"Roof, grid {n % 9 + 1} / C-D, beam RB-{n}",
            description=finding.message,
            reference="S-201; " + finding.clause,
            action=finding.action,
        )
        out.append(item_for(d, beam, result, "measured 130 x 456 mm; drawn 130 x 456 mm", [photo(n)]))
    return out


def notice(its: list[Item]) -> Notice:
    """An invented bench notice around the items."""
    return Notice(
        site_name="Bench Hall",
        address="1 Test Lane",
        permit_number="BP-0000",
        project_number="P-0",
        notice_number="BENCH-001",
        revision=0,
        visit_at="2026-12-01 09:00",
        issued_on="2026-12-01",
        reviewer="Bench Reviewer",
        firm="Bench Firm",
        addressed_to="Bench Builder",
        distribution=["File"],
        weather="dry",
        scope_reviewed="Roof",
        scope_not_reviewed="-",
        items=its,
    )


def bare(n: Notice) -> bytes:
    """The baseline: the same paragraphs and photo bytes in a plain Platypus story."""
    st = getSampleStyleSheet()["BodyText"]
    buf = io.BytesIO()
    doc = SimpleDocTemplate(buf, pagesize=LETTER, invariant=1)
    story: list[object] = [Paragraph(esc(f"{n.site_name} {n.address} {n.notice_number}"), st)]
    for it in n.items:
        for text in (
            it.number,
            it.location,
            it.observed,
            it.finding,
            it.reference,
            it.action,
            it.priority,
            it.due,
            *(f"{k}: {v}" for k, v in it.key_numbers),
        ):
            story.append(Paragraph(esc(text), st))
        for content in it.photos:
            raw = content if isinstance(content, bytes) else content.load()
            story.append(RLImage(io.BytesIO(raw), width=55 * mm, height=41 * mm))
        story.append(Spacer(1, 6))
    for c in n.cautions:
        story.append(Paragraph(esc(c), st))
    doc.build(story)
    return buf.getvalue()


def run(quick: bool = False) -> list[Row]:
    """Measure both notice sizes; return the table rows."""
    rows = []
    for count in (10, 30) if quick else (10, 100):
        n = notice(items(count))
        render_notice(n)  # fonts registered, modules warm
        repeats = 3 if quick or count >= 100 else 5
        lib = measure(partial(render_notice, n), repeats)
        base = measure(partial(bare, n), repeats)
        ratio = lib.median_s / base.median_s
        aim, met = "<= 1.5x", ratio <= 1.5
        if count == 100:
            aim, met = "< 5 s, <= 1.5x", lib.median_s < 5.0 and ratio <= 1.5
        rows.append(
            Row(
                f"notice, {count} items with photos",
                fmt_time(lib.median_s),
                fmt_time(base.median_s),
                f"{ratio:.1f}x",
                aim,
                met,
                f"{lib.spread_pct:.0f}%",
            )
        )
    rows.append(memory_row(60 if quick else 500))
    return rows


def lazy_items(count: int) -> list[Item]:
    """Items whose photo is made (as if read from its blob) only when the renderer draws it."""
    from dataclasses import replace
    from functools import partial

    from reports.content import Photo

    return [
        replace(it, photos=[Photo(sha256=f"bench{k}", load=partial(photo, k), caption=f"bench photo {k}")])
        for k, it in enumerate(items(count), start=1)
    ]


def peak_mb(count: int, which: str) -> float:
    """Peak resident memory (MB) of a fresh process rendering a count-item notice ('notice' or 'nophotos')."""
    import subprocess
    import sys

    code = (
        "from dataclasses import replace\n"
        "from bench.common import own_peak_mb\n"
        "from bench.report import items, lazy_items, notice\n"
        "from reports.render import render_notice\n"
        f"n = {count}\n"
        f"its = lazy_items(n) if {which!r} == 'notice' else [replace(i, photos=[]) for i in items(n)]\n"
        "pdf = render_notice(notice(its))\n"
        "print(own_peak_mb())\n"
    )
    out = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True, text=True)
    return float(out.stdout.strip().splitlines()[-1])


def memory_row(count: int) -> Row:
    """Peak memory of a count-item notice with one 3 MP photo each (issue 14 item 4: < 600 MB at 500).

    Baseline, same run: the same notice without its photos (text, tables, sketches). The notice reads
    each photo when it draws it and frees the decoded pixels after, so photos add a bounded amount.
    (Before this change, holding every decoded photo: 608 MB at 100 items, 2.64 GB at 500, issue 14.)
    """
    lib, base = peak_mb(count, "notice"), peak_mb(count, "nophotos")
    return Row(
        f"notice, {count} items with photos: peak memory",
        f"{lib:,.0f} MB",
        f"{base:,.0f} MB",
        f"{lib / base:.1f}x",
        "< 600 MB" if count >= 500 else "< 600 MB at 500 items",
        lib < 600 if count >= 500 else None,
    )


if __name__ == "__main__":
    from bench.common import print_table

    print_table(run())
