"""Issue 13: page 1 stands alone (summary of every item), items grouped by member, signed and hashed."""

import io
import re

from pypdf import PdfReader

from core import recheck
from core.records import Deficiency
from reports.content import item_for
from reports.render import render_notice
from tests.core.beams import glulam
from tests.reports.test_notice import _notice, save_pngs

PRIORITIES = ["before_loading", "immediate", "before_next_review", "observation"]


def _twenty_on_five():
    """20 items on 5 beams (4 each), priorities mixed, some with a date, numbers out of order."""
    items = []
    for b in range(5):
        beam = glulam(
            mark=f"RB-{b + 1}",
            bearings=[
                {"lateral": True, "rotation": True, "length_mm": 140},
                {"lateral": True, "rotation": False, "length_mm": 140},
            ],
        )
        r = recheck(beam)
        for k in range(4):
            n = 20 - (b * 4 + k)  # raised in reverse order
            d = Deficiency(
                id=f"d{n}",
                site_id="s",
                beam_id=f"beam{b}",
                number=f"D-AB12-{n:03d}",
                code="x",
                priority=PRIORITIES[(b + k) % 4],
                location=f"Roof, grid {'ABCDE'[b]} / 2-3, RB-{b + 1}, spot {k}",
                description=f"Finding {n} on RB-{b + 1}. More words follow here.",
                reference="S-201",
                action="Fix it",
                due="2026-12-15" if n % 5 == 0 else "",
            )
            items.append(item_for(d, beam, r, f"as built RB-{b + 1} BLOCK-{b + 1}", member_title=f"RB-{b + 1}"))
    return items


def _pages(pdf):
    return [p.extract_text() for p in PdfReader(io.BytesIO(pdf)).pages]


def test_summary_lists_every_item_in_order_with_its_due():
    items = _twenty_on_five()
    pages = _pages(render_notice(_notice(items)))
    summary = "\n".join(pages[: next(i for i, t in enumerate(pages) if "Items by member" in t)])
    found = re.findall(r"D-AB12-(\d{3})", summary)
    immediate = sorted(int(i.number[-3:]) for i in items if i.priority == "immediate")
    rest = sorted(int(i.number[-3:]) for i in items if i.priority != "immediate")
    assert [int(x) for x in found] == immediate + rest  # every item once: IMMEDIATE first, then by number
    flat = " ".join(summary.split())
    for i in items:
        row = flat[flat.index(i.number) :][:400]
        nxt = re.search(r"D-AB12-\d{3}", row[len(i.number) :])
        row = row[: len(i.number) + nxt.start()] if nxt else row
        # the due: a date the reviewer set, else the milestone of the priority (field-practice 1c)
        due = {
            "immediate": "now: make safe",
            "before_loading": "before loading or concealment",
            "before_next_review": "before the next review",
            "observation": "for information",
        }[i.priority]
        assert (i.due or due) in row, (i.number, row)


def test_first_page_stands_alone():
    items = _twenty_on_five()[:6]
    n = _notice(
        items,
        owner="Fernvale Parks Society",
        reviewer_designation="P.Eng.",
        reviewer_licence="EGBC 123456",
        reviewer_phone="604-555-0142",
        reviewer_email="priya@tamarack.example",
    )
    pdf = render_notice(n)
    first = " ".join(_pages(pdf)[0].split())
    for value in ("Fernvale Parks Society", "Northbeam Builders", "Owner, File", "EGBC 123456", "604-555-0142"):
        assert value in first, value
    for i in items:
        assert i.number in first
    assert "IMMEDIATE" in first and "call Priya Okonkwo-Lind" in first
    save_pngs(pdf, "notice13-first-page")


def test_twenty_items_on_five_beams_each_block_once():
    items = _twenty_on_five()
    pdf = render_notice(_notice(items))
    text = "\n".join(_pages(pdf))
    for b in range(1, 6):
        assert text.count(f"BLOCK-{b}") == 1, b  # the beam's description once
        assert text.count(f"Member RB-{b}:") == 1
    assert text.count("Engineering detail") == 5  # one recheck block per beam, not per item
    for i in items:
        assert text.count(f"Item {i.number}") == 1
    save_pngs(pdf, "notice13-twenty-on-five")
