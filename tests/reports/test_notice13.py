"""Issue 13: page 1 stands alone (summary of every item), items grouped by member, signed and hashed."""

import hashlib
import io
import re

import pytest
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
    summary = summary[summary.index("Summary of items") :]  # page 1's IMMEDIATE box above it names items too
    found = re.findall(r"D-AB12-(\d{3})", summary)
    # every item once, most urgent first, then by number within each priority (a contractor works through
    # a deficiency list by urgency: common practice)
    urgency = ["immediate", "before_loading", "before_next_review", "observation"]
    expected = [n for p in urgency for n in sorted(int(i.number[-3:]) for i in items if i.priority == p)]
    assert [int(x) for x in found] == expected
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
    assert "IMMEDIATE" in first
    assert "call Priya Okonkwo-Lind" in first
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


def _profiled_store(tmp_path):
    from mobile.demo.run import demo_clock, load_demo, raise_all
    from mobile.viewmodels.reviewer import ReviewerViewModel
    from storage import Store

    store = Store(tmp_path / "d.db", wall_clock_ms=demo_clock())  # on the demo's day, as the demo runs
    site_id = load_demo(store)
    raise_all(store, site_id)
    vm = ReviewerViewModel(store)
    for k, v in {
        "name": "Priya Okonkwo-Lind",
        "designation": "P.Eng.",
        "licence_number": "EGBC 123456",
        "firm": "Tamarack Structural Review Ltd.",
        "phone": "604-555-0142",
        "email": "priya@tamarack.example",
    }.items():
        vm.set(k, v)
    vm.draw_signature([[(10, 10), (60, 80), (120, 20), (200, 70)], [(220, 30), (300, 60)]], (320, 100))
    vm.seal = True
    assert vm.save() is not None, vm.message
    return store, site_id


def _ack(store, site_id):
    """The reviewer acknowledges the memory rows the open items use (issue 16 item 6)."""
    from mobile.issue import acknowledge, rows_for_items

    return acknowledge(store, rows_for_items(store, site_id), "P. O.")


def test_signed_notice_and_embedded_hash(tmp_path):
    from mobile.issue import issue_notice_for_site, verify_pdf
    from reports import stamp

    store, site_id = _profiled_store(tmp_path)
    issued, path = issue_notice_for_site(
        store, site_id, tmp_path / "n.pdf", "P. O.", issued_on="2026-11-30", acknowledgement=_ack(store, site_id)
    )
    pdf = path.read_bytes()
    reader = PdfReader(io.BytesIO(pdf))
    last = " ".join(reader.pages[-1].extract_text().split())
    for value in (
        "Priya Okonkwo-Lind",
        "P.Eng.",
        "licence EGBC 123456",
        "Tamarack Structural Review Ltd.",
        "2026-11-30",
    ):
        assert value in last, value
    assert "Seal" in last
    assert sum(len(p.images) for p in reader.pages[-1:]) >= 1  # the signature image
    digest = stamp.embedded_hash(pdf)
    assert digest is not None
    assert reader.metadata["/Keywords"] == "bracewalk-sha256:" + digest
    for page in reader.pages:
        assert "SHA-256 " + digest[:16] in page.extract_text()  # a printout can be checked
    # what is hashed, written out by hand: the file with the digits set back to zeros
    blank = pdf.replace(digest.encode(), b"0" * 64).replace(
        b"(SHA-256 " + digest[:16].encode(), b"(SHA-256 " + b"0" * 16
    )
    assert hashlib.sha256(blank).hexdigest() == digest
    assert verify_pdf(store, path).number == issued.number
    save_pngs(pdf, "notice13-signed")


def test_verify_refuses_any_change(tmp_path):
    from mobile.issue import issue_notice_for_site, verify_pdf
    from reports import stamp

    store, site_id = _profiled_store(tmp_path)
    _, path = issue_notice_for_site(
        store, site_id, tmp_path / "n.pdf", "P. O.", issued_on="2026-11-30", acknowledgement=_ack(store, site_id)
    )
    pdf = path.read_bytes()
    digest = stamp.embedded_hash(pdf)
    at_meta = pdf.index(digest.encode())
    at_footer = pdf.index(b"(SHA-256 " + digest[:16].encode()) + 10
    for where in (0, 100, len(pdf) // 3, len(pdf) // 2, len(pdf) - 20, at_meta + 5, at_footer):
        changed = bytearray(pdf)
        changed[where] = ord("1") if changed[where] != ord("1") else ord("2")
        assert stamp.embedded_hash(bytes(changed)) is None, where
        (tmp_path / "x.pdf").write_bytes(bytes(changed))
        assert verify_pdf(store, tmp_path / "x.pdf") is None, where


def test_same_input_same_bytes_when_stamped():
    items = _twenty_on_five()[:4]
    assert render_notice(_notice(items), stamp_hash=True) == render_notice(_notice(items), stamp_hash=True)


def test_signature_profile_validation(tmp_path):
    from mobile.viewmodels.reviewer import ReviewerViewModel
    from storage import Store

    store = Store(tmp_path / "d.db")
    vm = ReviewerViewModel(store)
    vm.set("name", "  ")
    assert vm.save() is None
    assert "name" in vm.message
    with pytest.raises(ValueError, match="draw at least one line"):
        vm.draw_signature([[(1, 1)]], (100, 100))


def test_sketch_locates_the_member():
    from reports.content import ft_in, support_names

    # 1 in = 25.4 mm exactly (the international inch); 7200 mm = 283.46 in = 23 ft 7.46 in
    assert ft_in(7200) == "23'-7 1/2\""
    assert ft_in(304.8) == "1'-0\""
    assert support_names("D / 2-3", 2) == ["D/2", "D/3"]
    assert support_names("2-3-4 / C", 3) == ["2/C", "3/C", "4/C"]  # in the order the gridline is written
    assert support_names("D / 2-3", 3) == ["D/2", "", "D/3"]  # the inner support is not guessed
    beam = glulam(
        mark="RB-5",
        bearings=[
            {"lateral": True, "rotation": True, "length_mm": 140},
            {"lateral": True, "rotation": False, "length_mm": 140},
        ],
    )
    r = recheck(beam)
    d = Deficiency(
        id="d1", site_id="s", beam_id="b", number="D-1", code="x", priority="immediate",
        location="Roof, RB-5, support 2 (right end)", description="No rotation restraint", reference="S-201",
        action="Restrain",
    )  # fmt: skip
    item = item_for(d, beam, r, "as built", member_title="RB-5 · level Roof · grid D / 2-3", gridline="D / 2-3")
    assert "support 2 (grid D/3)" in item.location
    pdf = render_notice(_notice([item]))
    text = " ".join("\n".join(_pages(pdf)).split())
    for value in ("RB-5 · level Roof · grid D / 2-3", "grid D/2", "grid D/3", "S2 NOT R", "span 7.20 m (23'-7 1/2\")"):
        assert value in text, value
    assert "NOT R not restrained" in text  # the legend
    save_pngs(pdf, "notice13-sketch")


def test_photo_markup_leaves_the_original_unchanged(tmp_path):
    from mobile.demo.run import demo_clock, load_demo, raise_all
    from mobile.issue import build_notice
    from storage import Store
    from tests.reports.test_notice import _big_photo

    store = Store(tmp_path / "d.db", wall_clock_ms=demo_clock())  # on the demo's day, as the demo runs
    site_id = load_demo(store)
    raise_all(store, site_id)
    d = store.deficiencies(site_id, open_only=True)[0]
    content = _big_photo()
    pid = store.add_photo(site_id, content, deficiency_id=d.id, caption="RB-4 west bearing, 2026-11-30, P. O.")
    sha = hashlib.sha256(content).hexdigest()
    store.mark_photo(site_id, pid, [{"kind": "arrow", "x": 0.2, "y": 0.8, "x2": 0.5, "y2": 0.5}])
    store.mark_photo(site_id, pid, [{"kind": "ring", "x": 0.5, "y": 0.5, "x2": 0.2}])
    assert hashlib.sha256(store.blob(sha)).hexdigest() == sha  # the evidence photo is never altered
    original = next(p for p in store.photos(site_id) if p["id"] == pid)
    assert "marks" not in original
    assert original["sha256"] == sha
    with pytest.raises(ValueError, match="allowed: a fraction"):
        store.mark_photo(site_id, pid, [{"kind": "ring", "x": 1.5, "y": 0.5}])
    notice, _ = build_notice(store, site_id, "N-1", only=[d.id])
    photos = [p for i in notice.items for p in i.photos]
    assert len(photos) == 1
    assert photos[0].marks[0].kind == "ring"  # the latest markup, once
    assert "RB-4 west bearing" in photos[0].caption
    pdf = render_notice(notice)
    assert "Photo 1: RB-4 west bearing, 2026-11-30, P. O." in " ".join("\n".join(_pages(pdf)).split())
    save_pngs(pdf, "notice13-markup")


def test_closeout_after_rereview_and_revision(tmp_path):
    from mobile.issue import issue_closeout, issue_notice_for_site, reissue
    from reports import stamp

    store, site_id = _profiled_store(tmp_path)
    first, _ = issue_notice_for_site(
        store, site_id, tmp_path / "n.pdf", "P. O.", issued_on="2026-11-30", acknowledgement=_ack(store, site_id)
    )
    rev1 = reissue(
        store,
        first,
        tmp_path / "n-rev1.pdf",
        "item D-x location corrected to grid D/3",
        "P. O.",
        acknowledgement=_ack(store, site_id),
    )
    text = " ".join("\n".join(_pages((tmp_path / "n-rev1.pdf").read_bytes())).split())
    assert f"{first.number} rev 1" in text
    assert "What changed in rev 1: item D-x location corrected" in text
    assert rev1.supersedes == first.id
    done, *rest = [store.deficiency(i) for i in first.deficiency_ids]
    store.move_status(done.id, "corrected", "D. Abernathy", "contractor", note="shimmed and bolted")
    store.move_status(done.id, "verified", "P. O.", "reviewer", note="seen fixed on site")
    closeout, path = issue_closeout(
        store, site_id, tmp_path / "c.pdf", "P. O.", issued_on="2026-12-10", acknowledgement=_ack(store, site_id)
    )
    pdf = path.read_bytes()
    assert closeout.number != first.number
    assert closeout.revision == 0  # a new numbered document
    assert stamp.embedded_hash(pdf) is not None
    text = " ".join("\n".join(_pages(pdf)).split())
    assert f"Close-out notice {closeout.number}" in text
    assert f"{done.number} verified (closed)" in text
    assert "seen fixed on site" in text
    for d in rest:
        assert f"{d.number} still open" in text, d.number
    save_pngs(pdf, "notice13-closeout")


def test_printable_and_accessible():
    items = _twenty_on_five()[:5]
    for size, box in (("a4", (595.3, 841.9)), ("letter", (612.0, 792.0))):
        pdf = render_notice(_notice(items, page_size=size), stamp_hash=True)  # page streams left readable
        reader = PdfReader(io.BytesIO(pdf))
        w, h = (float(x) for x in reader.pages[0].mediabox[2:])
        assert (round(w, 1), round(h, 1)) == box  # ISO 216 A4 210 x 297 mm; US Letter 8.5 x 11 in
        sizes = {float(x) for x in re.findall(rb"/F\d+ ([\d.]+) Tf", pdf)}
        assert sizes, sorted(sizes)
        assert min(sizes) >= 8.0, sorted(sizes)  # nothing below 8 pt
        assert reader.trailer["/Root"]["/Lang"] == "en"
        assert reader.trailer["/Root"]["/ViewerPreferences"]["/DisplayDocTitle"]
        assert reader.metadata.title.startswith("Deficiency notice TSR-2611-FR-AB12-001")
        save_pngs(pdf, f"notice13-{size}")
