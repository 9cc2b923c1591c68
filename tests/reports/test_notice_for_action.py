"""What a contractor acts on and an engineer signs: the items of one member name each other; the paper is signable.

Found by reading the demo notice as the site superintendent, the engineer of record and a building
official would (common practice for a field review notice: each item is closed on its own, a signed
document carries no software setup text, and its date is the date it was issued).
"""

import dataclasses
import io

from pypdf import PdfReader

from reports.render import pdf_date, render_notice
from tests.reports.test_notice import _item, _notice, text_of


def _flat(pdf):
    return " ".join(text_of(pdf).split())


def test_the_items_of_one_member_name_each_other_with_their_priorities():
    """An IMMEDIATE overstress and a 'before loading' item on the same beam: closing one must not read as both."""
    urgent, _ = _item(n=8)
    later = dataclasses.replace(urgent, number="D-AB12-009", priority="before_loading")
    alone, _ = _item(n=5, beam_id="b2")
    alone = dataclasses.replace(alone, member="b2")
    text = _flat(render_notice(_notice([urgent, later, alone])))
    assert "Same member D-AB12-009 (● Before loading or concealment). Each item is closed on its own" in text
    assert "Same member D-AB12-008 (▲ IMMEDIATE: make safe now). Each item is closed on its own" in text
    assert text.count("Same member") == 2  # the item alone on its member names nothing


def test_a_notice_without_a_scanned_signature_has_a_line_to_sign_and_no_setup_text():
    item, _ = _item()
    text = _flat(render_notice(_notice([item])))
    assert "Signature: ____" in text
    assert "no signature image" not in text
    assert "set up" not in text


def test_the_pdf_is_dated_the_day_it_was_issued_and_stays_byte_for_byte_the_same():
    item, _ = _item()
    notice = _notice([item], issued_on="2026-11-30")
    pdf = render_notice(notice)
    info = PdfReader(io.BytesIO(pdf)).metadata
    assert info["/CreationDate"] == info["/ModDate"] == "D:20261130000000+00'00'"  # ISO 32000-1 7.9.4 form
    assert render_notice(notice) == pdf  # invariant output: the same notice gives the same bytes
    assert pdf_date("2027-01-05") == "D:20270105000000+00'00'"


def test_the_engineer_of_record_the_items_refer_to_is_named_or_said_to_be_unrecorded():
    """Items say "refer to the engineer of record": the site must be told who that is (common practice)."""
    item, _ = _item()
    named = _flat(render_notice(_notice([item], engineer_of_record="Jun Tarrow, P.Eng., Kestrel Bay Structural")))
    assert "Engineer of record Jun Tarrow, P.Eng., Kestrel Bay Structural" in named
    unnamed = _flat(render_notice(_notice([item])))
    assert "Engineer of record not recorded: the owner names who it is" in unnamed


def _response(text, number):
    """The text of item ``number``'s response box, from 'Response' to the next item or section."""
    start = text.index(f"Item {number}")
    box = text.index("Response", start)
    ends = [i for i in (text.find("Item D-", box), text.find("Table rows", box)) if i > 0]
    return text[box : min(ends) if ends else len(text)]


def test_an_immediate_item_asks_who_made_it_safe_when_and_when_the_reviewer_was_told():
    """Common practice: a make-safe directive is confirmed back to whoever gave it, with who did it and when."""
    urgent, _ = _item(n=8)
    later = dataclasses.replace(urgent, number="D-AB12-009", priority="before_loading", member="b9")
    text = _flat(render_notice(_notice([urgent, later])))
    box = _response(text, "D-AB12-008")
    assert "Made safe (shored, propped or unloaded): ____" in box
    assert "by (name): ____" in box
    assert "on (date and time): ____" in box
    assert "Reviewer told (date and time, by whom): ____" in box
    assert "Action taken: ____" in box
    later_box = _response(text, "D-AB12-009")
    assert "Action taken: ____" in later_box
    assert "Made safe" not in later_box  # nothing to shore on an item due before loading


def test_the_action_taken_has_room_to_be_written_in():
    """One line for "action taken" held a word or two in handwriting; the box gives two lines, then date and name."""
    item, _ = _item(n=5)
    box = _response(_flat(render_notice(_notice([dataclasses.replace(item, priority="before_loading")]))), item.number)
    after = box.split("Action taken:", 1)[1]
    lines = [part for part in after.split("Date:")[0].split() if set(part) == {"_"}]
    assert len(lines) == 2
    assert all(len(line) >= 40 for line in lines)
    assert "Name: ____" in after


def test_each_member_names_the_loads_and_bearing_lengths_it_was_rechecked_with(tmp_path):
    """A member names the loads and bearing lengths behind its numbers, and where the loads came from.

    Common practice: a field review states the loads it checked against, so the engineer of record can check
    a recheck's inputs before its numbers; line loads from a design basis are kPa x tributary width = kN/m.
    """
    from core.records import DesignBasis
    from mobile.issue import acknowledge, issue_notice_for_site, rows_for_items
    from storage import Store
    from tests.core.beams import glulam

    store = Store(tmp_path / "m.db")
    roof = DesignBasis(dead_kpa=1.2, live_kpa=0.0, snow_kpa=1.95)
    site = store.create_site(name="Larch Yard", design_basis=roof, load_bases={"canopy": DesignBasis(dead_kpa=0.8)})
    width = 2.4
    loads = {"dead_kn_m": 1.2 * width, "live_kn_m": 0.0, "snow_kn_m": 1.95 * width}  # kPa x m = kN/m
    derived = store.save_beam(site.id, glulam(mark="RB-1", loads=loads), {"level": "Roof", "tributary_m": width})
    typed = store.save_beam(site.id, glulam(mark="CB-1", d_mm=304), {"level": "Canopy", "load_basis": "canopy"})
    for bid, where in ((derived, "Roof, RB-1"), (typed, "Canopy, CB-1")):
        store.raise_deficiency(site.id, bid, "undersize", "before_loading", where, "Undersize", "S-1", "Replace")
    ack = acknowledge(store, rows_for_items(store, site.id), "R. Ames")
    _, path = issue_notice_for_site(store, site.id, tmp_path / "n.pdf", "R. Ames", acknowledgement=ack)
    text = _flat(path.read_bytes())
    assert (
        # self-weight: 4.9 kN/m3 (the data file's glulam D.Fir-L unit weight) x 0.130 x 0.456 m = 0.29 kN/m
        "Loads checked dead 2.88 + self-weight 0.29, live 0, snow 4.68 kN/m specified (line loads derived from the "
        "site's design basis: dead 1.2, live 0, snow 1.95 kPa x tributary width 2.4 m); bearing lengths 140 mm and "
        "140 mm" in text
    )
    assert "(line loads as typed on the tablet (no tributary width recorded)); bearing lengths" in text


def test_the_scope_names_the_members_rechecked_on_this_visit_with_no_finding(tmp_path):
    """The scope lists this visit's members with no finding and no open item.

    A building official reads what was reviewed and passed as well as what failed (common practice: a field
    review report states the members it looked at).
    """
    from mobile.issue import acknowledge, issue_notice_for_site, rows_for_items
    from reports.content import no_finding_words
    from storage import Store
    from tests.core.beams import glulam

    store = Store(tmp_path / "m.db")
    site = store.create_site(name="Larch Yard")
    earlier = store.start_visit(site.id, "R. Ames", "2026-11-24 08:30")
    today = store.start_visit(site.id, "R. Ames", "2026-11-30 09:15")
    store.save_beam(site.id, glulam(mark="RB-1"), {"visit_id": today.id, "level": "Roof"})  # passes
    store.save_beam(site.id, glulam(mark="RB-0"), {"visit_id": earlier.id, "level": "Roof"})  # passes, seen before
    flagged = store.save_beam(site.id, glulam(mark="RB-2"), {"visit_id": today.id, "level": "Roof"})  # passes
    store.raise_deficiency(site.id, flagged, "substitution", "before_next_review", "Roof, RB-2", "Sub", "S-1", "Fix")
    # 1.25D + 1.5S on a 130 x 456 glulam over 7.2 m with 12 kN/m snow: overstressed (the recheck says so below)
    failing = store.save_beam(
        site.id, glulam(mark="RB-3", loads={"dead_kn_m": 3.0, "snow_kn_m": 12.0}), {"visit_id": today.id}
    )
    assert results_status(store, site.id, failing) != "ok"
    _, path = issue_notice_for_site(
        store,
        site.id,
        tmp_path / "n.pdf",
        "R. Ames",
        acknowledgement=acknowledge(store, rows_for_items(store, site.id), "R. Ames"),
    )
    text = _flat(path.read_bytes())
    assert (
        "Rechecked with no finding on this visit (on the inputs as recorded, within the limits in the cautions): "
        "RB-1 (1 member)" in text
    )
    marks = [f"J-{n}" for n in range(1, 66)]
    assert no_finding_words(marks).endswith("J-60, and 5 more (65 members; the office register lists them)")


def results_status(store, site_id, beam_id):
    from storage import results

    return results.fresh(store.db, site_id)[beam_id].status


def test_page_one_names_every_immediate_item_even_when_the_summary_runs_on():
    """The superintendent acts on page 1 (common practice: an urgent directive is whole where it is first read).

    Five IMMEDIATE items and a long summary: page 1 showed four of them and the fifth on page 2.
    """
    from reports.render import IMMEDIATE_LISTED

    base, _ = _item()
    urgent = [
        dataclasses.replace(
            base, number=f"D-AB12-{n:03d}", location=f"Roof, grid {n} / 1-2, RB-{n}", priority="immediate"
        )
        for n in range(1, IMMEDIATE_LISTED + 4)
    ]
    first = " ".join(text_of_pages(render_notice(_notice(urgent)))[0].split())
    for item in urgent[:IMMEDIATE_LISTED]:
        assert f"{item.number}: {item.location}" in first
    assert "and 3 more, listed first in the summary of items" in first
    few = " ".join(text_of_pages(render_notice(_notice(urgent[:5])))[0].split())
    assert all(f"{i.number}: {i.location}" in few for i in urgent[:5])
    assert "more, listed first" not in few


def text_of_pages(pdf):
    return [p.extract_text() for p in PdfReader(io.BytesIO(pdf)).pages]
