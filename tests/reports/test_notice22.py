"""Defects a fresh-eyes review found on the demo notice: each test fails on the code before the fix.

Sources: a contractor acts on the printed words, so an instruction is never cut and a table split over
pages says so (common practice for construction documents); gridline notation "line / range" and its
intersections "A/4" read the same way on one sheet (common practice on structural drawings); the
555-0100 to 555-0199 numbers and the .example domain are reserved for fiction (NANPA; RFC 2606).
"""

import io
import re

import pytest
from pypdf import PdfReader

from core import recheck
from core.records import Deficiency
from core.results import check_lines
from reports.content import item_for, one_line, support_names
from reports.render import item_count, render_notice
from tests.core.beams import glulam
from tests.reports.test_notice import _notice, save_pngs
from tests.reports.test_notice13 import _twenty_on_five

LONG = (
    "RB-9, span 1: the top edge is unbraced between the bearings at grid C and grid D because the purlin "
    "hangers at P3, P4 and P5 were never nailed to the beam (utilisation 1.42, 1.25D + 1.5S); the rest follows."
)


def _pages(pdf: bytes) -> list[str]:
    return [" ".join((p.extract_text() or "").split()) for p in PdfReader(io.BytesIO(pdf)).pages]


def _summary_text(pages: list[str]) -> str:
    """The summary of items alone: from its heading (page 1's IMMEDIATE box above it names items too)."""
    text = " ".join(pages[: next(i for i, t in enumerate(pages) if "Items by member" in t)])
    return text[text.index("Summary of items") :]


def _beam_item(number="D-AB12-001", finding=LONG, location="Roof, grid C / 2-3, RB-9, span 1", **beam):
    b = glulam(mark="RB-9", **beam)
    d = Deficiency(
        id=number, site_id="s", beam_id="b-" + number, number=number, code="x", priority="before_loading",
        location=location, description=finding, reference="S-201", action="Brace the top edge",
    )  # fmt: skip
    return item_for(d, b, recheck(b), "as built", member_title="RB-9", gridline=location.split(", ")[1][5:])


def _demo_notice(tmp_path, draft=False):
    """The demo site's notice as ``bracewalk demo`` builds it: its reviewer profile set, every finding raised."""
    from mobile.demo.run import load_demo, raise_all, set_demo_reviewer
    from mobile.issue import build_notice
    from storage import Store

    store = Store(tmp_path / "demo.db")
    site_id = load_demo(store)
    set_demo_reviewer(store)
    raise_all(store, site_id)
    notice, _ = build_notice(store, site_id, "TSR-2611-FR-TEST-001", issued_on="2026-11-30")
    store.close()
    if draft:
        import dataclasses

        notice = dataclasses.replace(notice, draft=True)
    return notice


# 1. the summary wraps the finding instead of cutting it; it gives the total and marks a continuation


def test_summary_prints_the_first_sentence_whole_and_wrapped():
    item = _beam_item()
    pdf = render_notice(_notice([item]))
    summary = _summary_text(_pages(pdf))
    first = "RB-9, span 1: the top edge is unbraced between the bearings at grid C and grid D because the purlin"
    assert first + " hangers at P3, P4 and P5 were never nailed to the beam (utilisation 1.42, 1.25D + 1.5S)" in summary
    assert "…" not in summary  # no cell is cut (the old summary cut at 80 characters with "…")
    assert "the rest follows" not in summary  # one sentence: the item's block prints the rest
    save_pngs(pdf, "notice22-summary-wrap")


@pytest.mark.parametrize(
    ("text", "first"),
    [
        ("S-P-F No. 2 joist notched at the bearing. See photo 2.", "S-P-F No. 2 joist notched at the bearing."),
        (
            "A split (approx. 300 mm; at the end) runs along it; more.",
            "A split (approx. 300 mm; at the end) runs along it",
        ),
        ("RB-5: no restraint (rolling over). d/b = 4.1 > 2.5, so", "RB-5: no restraint (rolling over)."),
    ],
)
def test_one_line_ends_at_a_sentence_never_inside_a_word_or_bracket(text, first):
    assert one_line(text) == first


def test_summary_states_the_total_and_marks_its_continuation():
    items = _twenty_on_five()  # each priority 5 times
    pdf = render_notice(_notice(items))
    pages = _pages(pdf)
    assert "20 items: 5 IMMEDIATE, 5 before loading, 5 before the next review, 5 observation" in pages[0]
    assert pages[0].endswith("page 1 of " + str(len(pages)))
    assert "The summary continues on the next page." in pages[0]
    # the next page opens with the continued heading, then the repeated header row
    assert pages[1].startswith(
        "Summary of items (continued): 20 items in all No., page Location What is wrong Priority"
    )
    numbers = re.findall(r"D-AB12-\d{3}", _summary_text(pages))
    assert len(numbers) == len(set(numbers)) == 20
    save_pngs(pdf, "notice22-summary-continued")


def test_a_summary_on_one_page_has_no_continuation_marks():
    items = _twenty_on_five()[:3]
    pages = _pages(render_notice(_notice(items)))
    assert item_count(items) in pages[0]
    assert "continued" not in " ".join(pages)
    assert item_count(items[:1]).startswith("1 item: ")  # singular


def test_demo_summary_item_9_on_page_2_is_marked_continued(tmp_path):
    pdf = render_notice(_demo_notice(tmp_path))
    pages = _pages(pdf)
    # FJ-1 fails under its dead load alone, so it is immediate (the 1.4D rule of core.findings)
    assert "9 items: 5 IMMEDIATE, 3 before loading, 1 before the next review" in pages[0]
    assert "D-TEST-009" not in pages[0]  # the ninth row is on page 2 (as the reviewer saw it)...
    assert pages[1].startswith("Summary of items (continued): 9 items in all")  # ... now under a heading
    assert "…" not in _summary_text(pages)
    save_pngs(pdf, "notice22-demo")


# 2. page 1 carries a short caution; the full cautions stay at the end


def test_page_one_has_a_short_caution_and_the_full_text_stays():
    pages = _pages(render_notice(_notice(_twenty_on_five()[:3])))
    assert (
        "Caution: these results support, and never replace, the judgement of the engineer of record; local codes "
        "and licensed practice govern." in pages[0]
    )
    assert "Local codes, the authority having jurisdiction and licensed practice govern." in pages[-1]
    # what the recheck covers: gravity line loads only (a roof beam's wind uplift is not rechecked)
    assert "wind, earthquake, point loads and connections are not checked" in " ".join(pages[-1].split())


# 3. a multi-span beam names its inner support by its gridline (the demo's RB-6)


def test_multi_span_supports_named_by_gridline():
    assert support_names("F / 1-2-3", 3) == ["F/1", "F/2", "F/3"]
    # only the ends recorded: the ends are named, the inner support is not guessed
    assert support_names("F / 1-3", 3) == ["F/1", "", "F/3"]
    two_span = {"spans_mm": [7000, 7000], "bearings": [{"lateral": True, "rotation": True, "length_mm": 140}] * 3}
    item = _beam_item(
        finding="RB-9, support 2: bottom edge unbraced.", location="Roof, grid F / 1-3, RB-9, support 2", **two_span
    )
    assert "support 2 (between grid F/1 and F/3)" in item.location
    pdf = render_notice(_notice([item]))
    text = " ".join(_pages(pdf))
    assert "grid F/1" in text
    assert "grid F/3" in text


def test_demo_rb6_items_and_sketch_name_support_2_by_its_grid(tmp_path):
    notice = _demo_notice(tmp_path)
    rb6 = [i for i in notice.items if i.member_title.startswith("RB-6")]
    assert len(rb6) == 2
    for i in rb6:
        assert "support 2 (grid F/2)" in i.location, i.location
        assert i.sketch is not None
        assert i.sketch.support_labels == ["F/1", "F/2", "F/3"]
    text = " ".join(_pages(render_notice(notice)))
    assert "grid F/2" in text


# 4. the contractor is told whom to reach and how, from what is recorded


def test_no_contact_recorded_never_says_call_and_names_the_firm():
    pdf = render_notice(_notice(_twenty_on_five()[:2], firm="Tamarack Structural Review Ltd."))
    first = _pages(pdf)[0]
    assert "call " not in first
    assert "Contact not recorded: reach the reviewer through Tamarack Structural Review Ltd." in first
    assert (
        "then contact Priya Okonkwo-Lind through Tamarack Structural Review Ltd. (the issuing firm; no phone or "
        "email is recorded on this notice) for a re-review"
    ) in first
    assert "For the issuer" not in first  # an issued notice carries no preview note
    none = _pages(render_notice(_notice(_twenty_on_five()[:2], firm="")))[0]
    assert "call " not in none
    assert "contact Priya Okonkwo-Lind through whoever sent you this notice" in none


def test_draft_preview_flags_no_contact_recorded_to_the_issuer():
    draft = _pages(render_notice(_notice(_twenty_on_five()[:2], draft=True)))[0]
    assert "For the issuer (preview only, not printed when issued): no contact recorded" in draft
    with_phone = _notice(_twenty_on_five()[:2], draft=True, reviewer_phone="604-555-0142")
    assert "For the issuer" not in _pages(render_notice(with_phone))[0]


def test_phone_or_email_only_gives_the_matching_instruction():
    phone = _pages(render_notice(_notice([], reviewer_phone="604-555-0142")))[0]
    assert "then call Priya Okonkwo-Lind at 604-555-0142 for a re-review" in phone
    email = _pages(render_notice(_notice([], reviewer_email="priya@tamarack.example")))[0]
    assert "then email Priya Okonkwo-Lind at priya@tamarack.example for a re-review" in email
    assert "call " not in email


def test_demo_notice_carries_the_fictional_contact(tmp_path):
    first = _pages(render_notice(_demo_notice(tmp_path)))[0]
    phone = re.search(r"Contact (\d{3})-555-(01\d\d) · (\S+@\S+\.example)", first)
    assert phone, first[:800]  # 555-0100..0199 and .example: reserved for fiction
    assert f"then call Priya Okonkwo-Lind at {phone[1]}-555-{phone[2]}" in first


# 5. the sketch names intersections in the order of the Location line


def test_sketch_labels_follow_the_location_notation():
    assert support_names("A-B / 4", 2) == ["A/4", "B/4"]
    assert support_names("D / 2-3", 2) == ["D/2", "D/3"]
    item = _beam_item(location="Roof, grid A-B / 4, RB-9, support 2")
    assert "support 2 (grid B/4)" in item.location
    text = " ".join(_pages(render_notice(_notice([item]))))
    assert "grid A/4" in text
    assert "grid B/4" in text
    assert "grid 4/A" not in text
    assert "grid 4/B" not in text


# 6. a member that passes as installed yet carries an item says so in one line


def test_passing_member_with_an_item_says_why_it_is_still_a_deficiency():
    # unbalanced 20f-E with its TOP stamp down (the demo's RB-8): the recheck as installed passes
    beam = {
        "grade": "20f-E",
        "top_stamp": "down",
        "top_edge": {"braced_by": "purlins", "spacing_mm": 1200, "fastened": True},
    }
    item = _beam_item(finding="RB-9: unbalanced layup installed with its TOP stamp down.", **beam)
    utils = [c.utilisation for c in item.checks]
    assert all(u is not None and u <= 1.0 for u in utils)
    pdf = render_notice(_notice([item]))
    text = " ".join(_pages(pdf))
    highest = max(check_lines(recheck(glulam(mark="RB-9", **beam))), key=lambda c: c.utilisation)
    assert (
        f"Passes as installed, still a deficiency: every check above is within capacity for the member as it is "
        f"installed; the highest utilisation is {highest.utilisation:.2f}, for {highest.name}. Item D-AB12-001 below "
        "still records a condition" in text
    )
    save_pngs(pdf, "notice22-passes-as-installed")


def test_failing_member_has_no_passes_line():
    item = _beam_item(b_mm=80, d_mm=304)  # a small section over 7.2 m: bending fails
    assert any(c.utilisation is None or c.utilisation > 1.0 for c in item.checks)
    assert "Passes as installed" not in " ".join(_pages(render_notice(_notice([item]))))


def test_the_immediate_box_speaks_to_the_contractor_who_reads_it():
    """Common practice: an immediate hazard is reported in person at once, never left to a notice in the mail.

    The box told the notice's own reader to "tell the contractor on site before this notice arrives".
    """
    pages = _pages(render_notice(_notice(_twenty_on_five()[:3])))
    first = pages[0]
    assert "make the area safe now (keep loads off, shore or brace); do not wait for this notice" in first
    assert "the reviewer also tells the site superintendent in person or by phone" in first
    assert "tell the contractor on site" not in " ".join(pages)


def test_the_signature_block_keeps_the_email_address_whole(tmp_path):
    # an address broken mid-word ("tamarack.exampl / e") cannot be copied or read back over the phone; the
    # phone and the address each take their own line in the block (common practice: contact details whole)
    notice = _demo_notice(tmp_path)
    last = PdfReader(io.BytesIO(render_notice(notice))).pages[-1].extract_text()
    signed = last[last.index("Signed") :]
    assert notice.reviewer_email in signed.splitlines(), signed
    assert notice.reviewer_phone in signed.splitlines(), signed
