"""A restraint item says whether doing it is enough: the member rechecked with it corrected.

The contractor who fastens the decking of a joist that is also overstressed must not read the fastening
as the cure. The numbers come from ``core.remedies.once_corrected`` (its hand check against
Mf = wL^2/8 and Mr = phi Fb S KZb KL is in tests/core/test_remedies.py); here the notice prints them on the
right item, and only there.
"""

import io

from pypdf import PdfReader

from core import recheck
from core.records import Deficiency
from reports.content import item_for
from reports.render import render_notice
from tests.core.beams import sawn
from tests.reports.test_notice import _notice

JOIST = {
    "mark": "FJ-9",
    "spans_mm": [3900],
    "top_edge": {"braced_by": "decking", "fastened": False},
    "loads": {"dead_kn_m": 0.3, "live_kn_m": 1.6, "snow_kn_m": 0.0},
}


def _deficiency(n, code, priority, location, action):
    return Deficiency(
        id=f"d{n}",
        site_id="s",
        beam_id="fj9",
        number=f"D-AB12-{n:03d}",
        code=code,
        priority=priority,
        location=location,
        description=f"finding {n}",
        reference="S-201",
        action=action,
    )


def _flat(pdf):
    return " ".join(" ".join(p.extract_text() for p in PdfReader(io.BytesIO(pdf)).pages).split())


def test_fastening_item_says_the_joist_still_fails_and_the_bending_item_has_no_such_line():
    beam = sawn(**JOIST)
    result = recheck(beam)
    fasten = _deficiency(
        2,
        "compression_edge_unbraced",
        "before_loading",
        "L2, grid B / 2-3, FJ-9, top edge",
        "Fasten the decking as detailed.",
    )
    bending = _deficiency(1, "bending_overstress", "before_loading", "L2, grid B / 2-3, FJ-9, span 1",
                          "Refer to the engineer of record.")  # fmt: skip
    items = [item_for(d, beam, result, "as built FJ-9", member_title="FJ-9") for d in (fasten, bending)]
    assert items[1].after == ""  # a bending item is not a restraint: no "after" line
    assert "With the decking fastened to the top edge, FJ-9 still fails" in items[0].after
    text = _flat(render_notice(_notice(items)))
    item2 = text[text.index("Item D-AB12-002") :]
    assert "After this action With the decking fastened to the top edge, FJ-9 still fails: bending, span 1" in item2
    assert "This action alone does not make the member safe to load" in item2
    item1 = text[text.index("Item D-AB12-001") : text.index("Item D-AB12-002")]
    assert "After this action" not in item1
    # the engineer's options list the fastening with the utilisation it gives, over 1.00 by itself
    assert "fasten the decking to the top edge as detailed: bending (positive moment) utilisation 1.31" in text


def test_an_edited_location_that_does_not_name_the_top_edge_gets_no_line():
    # the app writes "..., top edge"; a location the reviewer rewrote may name another part of the member,
    # so no corrected recheck is printed rather than one for the wrong restraint
    beam = sawn(**JOIST)
    d = _deficiency(3, "compression_edge_unbraced", "before_loading", "L2 joist FJ-9 near the stair", "Fasten it.")
    assert item_for(d, beam, recheck(beam), "as built FJ-9").after == ""


def test_a_member_says_on_which_visit_it_was_logged(tmp_path):
    # the demo's floor joist was logged on the first visit (2026-11-24); the notice follows the second: a
    # contractor reading a notice dated 2026-11-30 learns how long the condition has stood (common practice: a
    # field report states when each observation was made)
    from tests.reports.test_notice22 import _demo_notice

    notice = _demo_notice(tmp_path)
    by_title = {i.member_title.split(" · ")[0]: i for i in notice.items if i.member}
    assert (
        by_title["FJ-1"].logged
        == "on the visit of 2026-11-24 08:30 PST (this notice follows the visit of 2026-11-30 09:15 PST)"
    )
    assert by_title["RB-3"].logged == "on the visit of 2026-11-30 09:15 PST"
    # the header names the earlier visit and its scope beside this visit's (the floor was not in this one's)
    assert notice.earlier_visits == [
        "2026-11-24 08:30 PST (scope reviewed then: Level 2 floor framing, grids A-D / 1-4)"
    ]
    text = _flat(render_notice(notice))
    head = text[: text.index("Summary of items")]
    assert "Scope reviewed: Roof framing grids A-F / 1-6" in head
    assert (
        "Earlier visits: some items are on members logged on 2026-11-24 08:30 PST (scope reviewed then: Level 2 floor "
        "framing, grids A-D / 1-4)" in head
    )
    member = text[text.index("Member FJ-1") :]
    assert member.index("Logged on the visit of 2026-11-24 08:30 PST") < member.index("Item D-")


def test_a_beam_with_no_recorded_visit_gets_no_logged_line():
    from core.records import Visit
    from mobile.issue import logged_words

    visits = [Visit(id="v1", site_id="s", started_at="2026-11-24 08:30", reviewer="P. O.")]
    assert logged_words({"mark": "B-1"}, visits) == ""
    assert logged_words({"mark": "B-1", "visit_id": "elsewhere"}, visits) == ""  # a visit not on this tablet
    assert logged_words({"mark": "B-1", "visit_id": "v1"}, visits) == "on the visit of 2026-11-24 08:30"
