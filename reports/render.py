"""Render a notice or a recheck sheet to PDF bytes (reportlab Platypus, invariant output)."""

from __future__ import annotations

import io
import re
from typing import Any

from reportlab import rl_config
from reportlab.lib import colors
from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfgen import canvas as rl_canvas
from reportlab.platypus import (
    Flowable,
    FrameBreak,
    Image,
    KeepTogether,
    PageBreak,
    SimpleDocTemplate,
    Spacer,
    Table,
    TableStyle,
)

from core.casetable import CaseTable, case_table
from core.kinds import Outcome
from core.models import Beam
from core.results import BendingRegion, Recheck, check_lines, check_trace, utilisation_text
from reports import stamp
from reports.content import (
    Item,
    Notice,
    Photo,
    by_member,
    due_words,
    lifting_bearings,
    member_sketch,
    no_finding_words,
    one_line,
    ordered,
    response_lines,
    same_member_words,
    trace_value,
    typeset,
    uplift_row,
)
from reports.inputs import input_rows
from reports.loadcases import case_section, reaction_section
from reports.photos import CELL_W_MM, photo_flowable, wide_box
from reports.sketch import FONT, FONT_BOLD, beam_sketch, register_fonts
from reports.tablerows import memory_rows
from reports.textrun import Paragraph, markup
from reports.words import SHORT_PRIORITY, priority_label

# Binary (Flate/DCT) streams instead of ASCII85: reportlab's pure-Python ASCII85 encoder was most of
# the time of a notice with photos, and binary streams are a fifth smaller. Process-wide by design.
rl_config.useA85 = 0

HASH_FONT = "Courier"  # a standard font: the hash digits stay literal bytes in the page (see reports.stamp)


def esc(text: object) -> str:
    """Escape user text for a Paragraph: markup characters appear as typed, any script prints (textrun)."""
    register_fonts()
    return markup(text, FONT)


PAGE_SIZES = {"letter": LETTER, "a4": A4}
WIDTH = 174 * mm  # the text width on both Letter and A4 (18 mm margins on A4)
GREY = colors.Color(0.93, 0.93, 0.93)


FOOTER_PT = 8
FOOTER_LEADING = 9.6
FOOTER_BASELINE = 10 * mm  # the footer's lowest line
WIDEST_PAGE_LABEL = "page 8888 of 8888"


def footer_room(page_width: float, hashed: bool) -> float:
    """Width for the footer's left text: it ends 3 mm before the hash short form, or before the page label."""
    if hashed:
        hash_w = pdfmetrics.stringWidth(stamp.placeholder_footer(), HASH_FONT, FOOTER_PT)
        end = page_width / 2 + 20 * mm - hash_w / 2
    else:
        register_fonts()
        end = page_width - 18 * mm - pdfmetrics.stringWidth(WIDEST_PAGE_LABEL, FONT, FOOTER_PT)
    return end - 3 * mm - 18 * mm


def footer_paragraph(text: str, page_width: float, hashed: bool) -> tuple[Paragraph, float]:
    """The footer's left text (notice number, site) set in fonts that have its script, wrapped to its room.

    Returns the paragraph, wrapped, and its height: a long site name takes more lines, never the hash's
    or the page label's place (the body's bottom margin grows by the extra lines, ``footer_extra``).
    """
    style = ParagraphStyle("footer", fontName=FONT, fontSize=FOOTER_PT, leading=FOOTER_LEADING, wordWrap="CJK")
    para = Paragraph(esc(text), style)
    _, height = para.wrap(footer_room(page_width, hashed), 10 * FOOTER_LEADING)
    return para, height


def footer_extra(text: str, page_width: float, hashed: bool) -> float:
    """How much higher than one line the footer's left text reaches (0 when it fits on one line)."""
    return max(0.0, footer_paragraph(text, page_width, hashed)[1] - FOOTER_LEADING)


class PageRefs:
    """Where each item's block starts, for the summary's Page column (a forward reference, filled at save).

    The summary is drawn before the items are laid out, so under each item's number it draws a named PDF form
    (``_PageRef``) whose content, the page number, is written when the canvas saves, from the pages the
    items' headings recorded as they were drawn (``_ItemHeading``). The layout does not change: the cell
    is sized for four digits either way.
    """

    def __init__(self) -> None:
        self.names: dict[str, str] = {}  # item key -> form name
        self.pages: dict[str, int] = {}  # item key -> page its heading is drawn on

    def name(self, key: str) -> str:
        """The form that prints the page of ``key`` (made on first use)."""
        return self.names.setdefault(key, f"pageref{len(self.names)}")

    def write_forms(self, canv: rl_canvas.Canvas) -> None:
        """Define each referenced form as its page number; an item never drawn is an error, not a blank."""
        missing = sorted(k for k in self.names if k not in self.pages)
        if missing:
            msg = f"page references: the block of item(s) {', '.join(missing)} was never drawn"
            raise RuntimeError(msg)
        for key, name in self.names.items():
            canv.beginForm(name)
            canv.setFont(FONT, PAGE_REF_PT)
            canv.drawString(0, PAGE_REF_BASELINE, f"p. {self.pages[key]}")
            canv.endForm()


PAGE_REF_PT = 8
PAGE_REF_BASELINE = 2.0  # as a one-line 8/10 pt Paragraph's baseline sits in its cell


class _PageRef(Flowable):
    """'p. 12' under an item's number in the summary: the named form ``PageRefs.write_forms`` fills in."""

    def __init__(self, refs: PageRefs, key: str):
        super().__init__()
        self._name = refs.name(key)

    def wrap(self, avail_w: float, avail_h: float) -> tuple[float, float]:  # noqa: ARG002 (Flowable.wrap)
        """One small line, room for four digits."""
        return pdfmetrics.stringWidth("p. 8888", FONT, PAGE_REF_PT), 10.0

    def draw(self) -> None:
        """Draw the form (defined when the canvas saves)."""
        self.canv.doForm(self._name)


class _ItemHeading(Paragraph):
    """An item's heading that records the page it is drawn on (``PageRefs.pages``)."""

    def __init__(self, text: str, style: ParagraphStyle, refs: PageRefs | None, key: str):
        super().__init__(text, style)
        self._refs, self._key = refs, key

    def draw(self) -> None:
        """Record the page, then draw the heading."""
        if self._refs is not None:
            self._refs.pages[self._key] = self.canv.getPageNumber()
        super().draw()


def pdf_date(day: str) -> str:
    """A PDF date (ISO 32000 7.9.4) for the day 'YYYY-MM-DD', at midnight UTC: 'D:20261130000000+00'00''."""
    if not re.fullmatch(r"\d{4}-\d{2}-\d{2}", day):
        msg = f"issued_on {day!r}: expected a date YYYY-MM-DD"
        raise ValueError(msg)
    return f"D:{day.replace('-', '')}000000+00'00'"


class NumberedCanvas(rl_canvas.Canvas):
    """Canvas that prints 'page X of Y', the notice number and the hash short form on every page."""

    footer_left = ""
    footer_right = ""  # e.g. the SHA-256 short form of an issued notice
    draft = False
    page_refs: PageRefs | None = None  # the summary's page numbers, written as forms when saving

    issued_on = ""  # "YYYY-MM-DD": the document's creation date (invariant output otherwise dates it 2000-01-01)

    def __init__(self, *args: Any, **kwargs: Any):
        kwargs.setdefault("invariant", 1)
        super().__init__(*args, **kwargs)
        self._pages: list[dict[str, Any]] = []
        if self.issued_on:
            self.setDateFormatter(lambda *_: pdf_date(self.issued_on))

    def showPage(self) -> None:
        """Hold each page until the total is known."""
        self._pages.append(dict(self.__dict__))
        self._startPage()

    def save(self) -> None:
        """Stamp every held page with its number of the total, then write."""
        total = len(self._pages)
        left: tuple[Paragraph, float] | None = None
        for state in self._pages:
            self.__dict__.update(state)
            width, height = self._pagesize
            left = left or footer_paragraph(self.footer_left, width, bool(self.footer_right))
            # the paragraph's last line on the footer's baseline: its lines above it, never beside the hash
            left[0].drawOn(self, 18 * mm, FOOTER_BASELINE - (FOOTER_LEADING - FOOTER_PT))
            self.setFont(FONT, FOOTER_PT)
            self.drawRightString(width - 18 * mm, 10 * mm, f"page {self._pageNumber} of {total}")
            if self.footer_right:
                self.setFont(HASH_FONT, 8)
                self.drawCentredString(width / 2 + 20 * mm, 10 * mm, self.footer_right)
            if self.draft:
                self.setFont(FONT_BOLD, 11)
                self.drawCentredString(width / 2, height - 9 * mm, "DRAFT PREVIEW: NOT ISSUED, NOT FOR USE")
            super().showPage()
        if self.page_refs is not None:
            self.page_refs.write_forms(self)
        super().save()


def _styles() -> dict[str, ParagraphStyle]:
    register_fonts()
    base = ParagraphStyle("base", fontName=FONT, fontSize=9, leading=11.5, wordWrap="CJK")
    return {
        "base": base,
        "small": ParagraphStyle("small", parent=base, fontSize=8, leading=10),
        "title": ParagraphStyle("title", parent=base, fontName=FONT_BOLD, fontSize=15, leading=19),
        "h2": ParagraphStyle("h2", parent=base, fontName=FONT_BOLD, fontSize=11, leading=14, spaceBefore=6),
        "h3": ParagraphStyle("h3", parent=base, fontName=FONT_BOLD, fontSize=10, leading=13, spaceBefore=4),
        "bold": ParagraphStyle("bold", parent=base, fontName=FONT_BOLD),
    }


def _grid(
    rows: list[list[Any]],
    widths: list[float],
    shade_first_col: bool = True,
    repeat: int = 0,
    table: type[Table] = Table,
) -> Table:
    # splitInRow: a cell taller than a page (a long description) continues on the next page
    t = table(rows, colWidths=widths, splitInRow=1, repeatRows=repeat)
    style = [
        ("GRID", (0, 0), (-1, -1), 0.4, colors.grey),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 3),
    ]
    if shade_first_col:
        style.append(("BACKGROUND", (0, 0), (0, -1), GREY))
    t.setStyle(TableStyle(style))
    return t


def _rows(pairs: list[tuple[str, str]], st: dict[str, ParagraphStyle]) -> list[list[Any]]:
    return [[Paragraph(esc(k), st["bold"]), Paragraph(esc(v), st["base"])] for k, v in pairs]


def _contact(n: Notice) -> str:
    return " · ".join(x for x in (n.reviewer_phone, n.reviewer_email) if x)


def _contact_row(n: Notice) -> str:
    """The Contact line: phone and email, or whom to reach when neither is recorded."""
    if _contact(n):
        return _contact(n)
    if n.firm:
        return f"not recorded: reach the reviewer through {n.firm}"
    return "not recorded"


def _reach_reviewer(n: Notice) -> str:
    """How the contractor asks for the re-review, from what is recorded: never a number that is not there."""
    who = n.reviewer or "the reviewer"
    if n.reviewer_phone:
        return f"call {who} at {n.reviewer_phone}" + (f" (email {n.reviewer_email})" if n.reviewer_email else "")
    if n.reviewer_email:
        return f"email {who} at {n.reviewer_email}"
    if n.firm:
        return f"contact {who} through {n.firm} (the issuing firm; no phone or email is recorded on this notice)"
    return f"contact {who} through whoever sent you this notice (no phone, email or firm is recorded on it)"


def _issuer_warnings(n: Notice) -> list[str]:
    """What the issuer should fix before issuing, printed on a draft preview only (never on an issued notice)."""
    if not n.draft:
        return []
    out = []
    if not _contact(n):
        out.append(
            "no contact recorded: the notice gives the contractor no phone or email for the reviewer"
            + (f" and sends them to {n.firm}" if n.firm else " and no firm")
            + "; add a phone or email in the reviewer profile before issuing."
        )
    return out


SHORT_CAUTION = (
    "<b>Caution:</b> these results support, and never replace, the judgement of the engineer of record; local "
    "codes and licensed practice govern. The full cautions are at the end of this notice."
)


def _first_page(n: Notice, st: dict[str, ParagraphStyle], refs: PageRefs) -> list[Any]:
    """Page 1: to whom, from whom, the site, the visit, the scope, and the summary of every item."""
    p = st["base"]
    rev = f" rev {n.revision}" if n.revision else ""
    kind = "Close-out notice" if n.kind == "close-out" else "Deficiency notice"
    story: list[Any] = [Paragraph(f"{kind} {esc(n.notice_number)}{esc(rev)}", st["title"]), Spacer(1, 4)]
    for warning in _issuer_warnings(n):
        note = f"<b>For the issuer (preview only, not printed when issued):</b> {esc(warning)}"
        story += [_boxed(note, st), Spacer(1, 4)]
    immediate = [i for i in n.items if i.priority == "immediate"]
    if immediate:
        story += [_immediate_box(immediate, st), Spacer(1, 4)]
    to = [("Owner", n.owner or "not recorded"), ("Contractor", n.addressed_to or "not recorded")]
    # the items refer repairs to the engineer of record: the site is told who that is
    to.append(("Engineer of record", n.engineer_of_record or "not recorded: the owner names who it is"))
    to.append(("Copies", ", ".join(n.distribution) or "none"))
    licence = ", ".join(
        x for x in (n.reviewer_designation, f"licence {n.reviewer_licence}" if n.reviewer_licence else "") if x
    )
    sender = [
        ("Reviewer", (n.reviewer + (f", {licence}" if licence else "")) or "not recorded"),
        ("Firm", n.firm or "not recorded"),
        ("Contact", _contact_row(n)),
    ]
    # To, then From, one above the other: text extraction and screen readers read them in that order
    # (side by side, a reader interleaved the two columns)
    rows = [[Paragraph("To", st["h3"]), ""], *_rows(to, st), [Paragraph("From", st["h3"]), ""], *_rows(sender, st)]
    pair = _grid(rows, [22 * mm, 152 * mm])
    heads = (0, len(to) + 1)
    pair.setStyle(
        TableStyle(
            [cmd for r in heads for cmd in (("SPAN", (0, r), (-1, r)), ("BACKGROUND", (0, r), (-1, r), colors.white))]
        )
    )
    story.append(pair)
    site = [
        ["Site", Paragraph(esc(n.site_name), p), "Visit", Paragraph(esc(n.visit_at), p)],
        ["Address", Paragraph(esc(n.address), p), "Issued", Paragraph(esc(n.issued_on), p)],
        ["Permit no.", Paragraph(esc(n.permit_number), p), "Weather", Paragraph(esc(n.weather), p)],
        ["Project no.", Paragraph(esc(n.project_number), p), "Notice", Paragraph(esc(n.notice_number + rev), p)],
    ]
    site = [[Paragraph(c, st["bold"]) if isinstance(c, str) else c for c in r] for r in site]
    t = _grid(site, [22 * mm, 65 * mm, 20 * mm, 67 * mm])
    t.setStyle(TableStyle([("BACKGROUND", (2, 0), (2, -1), GREY)]))
    story += [Spacer(1, 4), t, Spacer(1, 4)]
    if n.change_note:
        story.append(Paragraph(f"<b>What changed in rev {n.revision}:</b> {esc(n.change_note)}", p))
    story.append(Paragraph(f"<b>Scope reviewed:</b> {esc(n.scope_reviewed or 'not recorded')}", p))
    story.append(Paragraph(f"<b>Not reviewed:</b> {esc(n.scope_not_reviewed or 'not recorded')}", p))
    if n.no_finding:  # what was looked at and passed: an official sees the whole scope, not only what failed
        story.append(
            Paragraph(
                "<b>Rechecked with no finding on this visit</b> (on the inputs as recorded, within the limits in the "
                f"cautions): {esc(no_finding_words(n.no_finding))}",
                p,
            )
        )
    if n.earlier_visits:  # items on members logged before this visit: when and in what scope they were seen
        seen = "; ".join(esc(v) for v in n.earlier_visits)
        story.append(Paragraph(f"<b>Earlier visits:</b> some items are on members logged on {seen}", p))
    story.append(
        Paragraph(
            "<b>What to do:</b> complete each item by its due date or milestone, write the action taken, the date "
            f"and your name in the item's response box, then {esc(_reach_reviewer(n))} for a re-review. Do not "
            "conceal work that an open item concerns before it has been re-reviewed.",
            p,
        )
    )
    story += [Spacer(1, 2), Paragraph(SHORT_CAUTION, st["small"])]
    story += [Spacer(1, 4), Paragraph("Summary of items", st["h2"])]
    if n.items:
        story.append(Paragraph(esc(item_count(n.items)), st["bold"]))
    story.append(_summary(n, st, refs))
    return story


def item_count(items: list[Item]) -> str:
    """'9 items: 2 IMMEDIATE, 6 before loading, 1 before the next review': most urgent first."""
    counts: dict[str, int] = {}
    for i in items:
        counts[i.priority] = counts.get(i.priority, 0) + 1
    order = [*COUNT_WORDS, *sorted(set(counts) - set(COUNT_WORDS))]
    parts = [f"{counts[p]} {COUNT_WORDS.get(p, p)}" for p in order if p in counts]
    total = len(items)
    return f"{total} item{'s' if total != 1 else ''}: " + ", ".join(parts)


COUNT_WORDS = {
    "immediate": "IMMEDIATE",
    "before_loading": "before loading",
    "before_next_review": "before the next review",
    "observation": "observation",
}


IMMEDIATE_LISTED = 12  # IMMEDIATE items named in page 1's box; more are counted (the summary lists them first)


def _immediate_box(immediate: list[Item], st: dict[str, ParagraphStyle]) -> Table:
    """Page 1's box: what to do now, and every IMMEDIATE item by number and place (up to IMMEDIATE_LISTED).

    The summary below may run onto page 2 and a superintendent acts on page 1: each member to make safe is
    named here, whatever the summary's length.
    """
    named = "<br/>".join(f"<b>{esc(i.number)}</b>: {esc(i.location)}" for i in ordered(immediate)[:IMMEDIATE_LISTED])
    more = len(immediate) - IMMEDIATE_LISTED
    if more > 0:
        named += f"<br/>and {more} more, listed first in the summary of items"
    return _boxed(
        f"<b>▲ {len(immediate)} IMMEDIATE item(s):</b> make the area safe now (keep loads off, shore or brace); do "
        "not wait for this notice: the reviewer also tells the site superintendent in person or by phone.<br/>" + named,
        st,
    )


def _boxed(text: str, st: dict[str, ParagraphStyle]) -> Table:
    """One paragraph (markup) in a heavy box across the page."""
    box = Table([[Paragraph(text, st["base"])]], colWidths=[WIDTH])
    box.setStyle(TableStyle([("BOX", (0, 0), (-1, -1), 2, colors.black)]))
    return box


class _ContinuedTable(Table):
    """A table split across pages with its marks: a continuation line, then a '(continued)' heading.

    'The summary continues on the next page' goes under the first part; the next part starts with the
    '(continued)' heading, then the repeated header row. With ``heading_when_moved`` (an item's photos),
    a table of which not one row fits where it stands goes to the next page under the heading too, so
    what it shows is never on a page that does not say what it belongs to.
    """

    continued_heading: Any = None  # Flowables set on the instance, passed to the parts a split makes
    continues_mark: Any = None
    heading_when_moved = False
    _moved = False  # already moved under its heading once: not again (a row taller than a page)

    def split(self, availWidth: float, availHeight: float) -> list[Any]:
        """Split as a Table does, leaving room for the mark; the later part is kept with its heading."""
        if self.continued_heading is None or self.continues_mark is None:
            return list(super().split(availWidth, availHeight))
        _, mark_h = self.continues_mark.wrap(availWidth, availHeight)
        parts = list(super().split(availWidth, availHeight - mark_h))
        if not parts and self.heading_when_moved and not self._moved:
            self._moved = True
            # the mark when it fits here, else a frame break: what a split returns first must fit where it stands
            first = self.continues_mark if mark_h <= availHeight else FrameBreak()
            return [first, KeepTogether([self.continued_heading, self])]
        if len(parts) < 2:
            return parts
        for part in parts:
            part.continued_heading, part.continues_mark = self.continued_heading, self.continues_mark
            part.heading_when_moved = self.heading_when_moved
        return [parts[0], self.continues_mark, KeepTogether([self.continued_heading, *parts[1:]])]


def item_key(item: Item) -> str:
    """What the summary's Page cell and the item's heading agree on: the item's number."""
    return item.number


def _summary(n: Notice, st: dict[str, ParagraphStyle], refs: PageRefs) -> Table:
    """Every item in one table: IMMEDIATE first and boxed, then by number, with the page its block is on."""
    s = st["small"]
    words = ParagraphStyle("words", parent=s, wordWrap=None)  # break between words only
    bold = ParagraphStyle("pb", parent=words, fontName=FONT_BOLD)
    head = ["No., page", "Location", "What is wrong", "Priority", "Due", "Status"]
    rows: list[list[Any]] = [[Paragraph(h, st["bold"]) for h in head]]
    items = ordered(n.items)
    for i in items:
        rows.append(
            [
                [Paragraph(esc(i.number), s), _PageRef(refs, item_key(i))],  # "p. 12": where its block starts
                Paragraph(esc(i.location), words),
                Paragraph(esc(one_line(i.finding)), words),  # whole, wrapped between words: never cut
                Paragraph(esc(SHORT_PRIORITY.get(i.priority, i.priority)), bold),
                Paragraph(esc(due_words(i.priority, i.due)), words),
                Paragraph(esc(i.status), words),
            ]
        )
    if not items:
        rows.append([Paragraph("No open deficiencies.", s), "", "", "", "", ""])
    t = _grid(
        rows,
        [21 * mm, 33 * mm, 52 * mm, 24 * mm, 26 * mm, 18 * mm],
        shade_first_col=False,
        repeat=1,
        table=_ContinuedTable,
    )
    t.continued_heading = Paragraph(f"Summary of items (continued): {len(items)} items in all", st["h2"])
    t.continues_mark = Paragraph("<i>The summary continues on the next page.</i>", st["small"])
    style: list[Any] = [("BACKGROUND", (0, 0), (-1, 0), GREY)]
    n_imm = sum(1 for i in items if i.priority == "immediate")
    if n_imm:
        style.append(("BOX", (0, 1), (-1, n_imm), 2, colors.black))
    t.setStyle(TableStyle(style))
    return t


PHOTOS_PER_ROW = 3


CELL_PAD = 6  # pt, a table cell's default left and right padding


def _photo_table(photos: list[bytes | Photo], st: dict[str, ParagraphStyle], of: str) -> Table:
    """Every photo, numbered in order, three to a row (a fourth and later photo starts a new row, never left out).

    A wide photo (``reports.photos.wide_box``: a panorama along a beam) has a row of its own across the text
    width, so it prints 21-60 mm tall instead of a strip a few millimetres high in a third of the row.
    ``of`` names what the photos show ('item D-AB12-001'): photos that cross to the next page, or go
    there whole, open it under 'Photos of item D-AB12-001 (continued)'.
    """
    rows: list[tuple[list[Any], bool]] = []  # (cells, wide)
    for k, ph in enumerate(photos):
        box = wide_box(ph, WIDTH - 2 * CELL_PAD)
        if box is not None:
            rows.append(([photo_flowable(ph, k + 1, st["small"], *box)], True))
        elif rows and not rows[-1][1] and len(rows[-1][0]) < PHOTOS_PER_ROW:
            rows[-1][0].append(photo_flowable(ph, k + 1, st["small"]))
        else:
            rows.append(([photo_flowable(ph, k + 1, st["small"])], False))
    cells = [row for row, _ in rows]
    if not any(wide for _, wide in rows):
        if len(cells) > 1:
            cells[-1] += [""] * (PHOTOS_PER_ROW - len(cells[-1]))
        return _continued(_ContinuedTable(cells, hAlign="LEFT"), f"Photos of {of}", st, "continue")
    for row in cells:
        row += [""] * (PHOTOS_PER_ROW - len(row))
    table = _ContinuedTable(cells, colWidths=[CELL_W_MM * mm + 2 * CELL_PAD] * PHOTOS_PER_ROW, hAlign="LEFT")
    table.setStyle(TableStyle([("SPAN", (0, r), (-1, r)) for r, (_, wide) in enumerate(rows) if wide]))
    return _continued(table, f"Photos of {of}", st, "continue")


def _continued(table: Table, what: str, st: dict[str, ParagraphStyle], verb: str = "continues") -> Table:
    """``table`` (a _ContinuedTable) marked as ``what`` (markup) where it crosses a page or moves whole to the next."""
    table.continued_heading = Paragraph(f"{what} (continued)", st["h3"])
    table.continues_mark = Paragraph(f"<i>{what} {verb} on the next page.</i>", st["small"])
    table.heading_when_moved = True
    return table


def _item_rows(item: Item, st: dict[str, ParagraphStyle], group: list[Item] | None = None) -> list[list[Any]]:
    """An item's table: location, finding, reference, action, the member's other items, priority, due, response.

    ``group``: the items of the member ``item`` is on (``by_member``), named in its "Same member" row.
    """
    p = st["base"]
    rows = [("Location", item.location)]
    if not item.member and item.observed.strip() != item.finding.strip():
        # a member's block already describes what was observed; an item not on a beam whose observation
        # is its finding (build_notice passes the description) prints it once, as the finding
        rows.append(("Observed", item.observed))
    rows += [
        ("Finding", item.finding),
        ("Reference", item.reference),
        ("Required action", item.action),
    ]
    if item.after:
        rows.append(("After this action", item.after))
    also = same_member_words(item, group or [], priority_label)
    if also:
        rows.append(("Same member", also))
    grid_rows = _rows(rows, st)
    grid_rows.append([Paragraph("Priority", st["bold"]), Paragraph(esc(priority_label(item.priority)), st["bold"])])
    grid_rows.append([Paragraph("Due", st["bold"]), Paragraph(esc(due_words(item.priority, item.due)), p)])
    response = response_lines(item.priority)
    if response:
        grid_rows.append([Paragraph("Response", st["bold"]), Paragraph("<br/><br/>".join(map(esc, response)), p)])
    return grid_rows


def _member_block(group: list[Item], st: dict[str, ParagraphStyle], refs: PageRefs) -> list[Any]:
    """One beam: its description, sketch, photos and recheck once, then each of its items."""
    first = group[0]
    out: list[Any] = [Spacer(1, 6)]
    head: list[Any] = []
    if first.member:
        numbers = ", ".join(i.number for i in group)
        head.append(Paragraph(f"Member {esc(first.member_title or first.location)}: {esc(numbers)}", st["h2"]))
        about = [("As built", first.observed)] + ([("Logged", first.logged)] if first.logged else [])
        about += [("Loads checked", first.loads)] if first.loads else []
        head.append(_grid(_rows(about, st), [30 * mm, 144 * mm]))
        if first.sketch is not None:
            head.append(beam_sketch(first.sketch, width_pt=WIDTH, height_pt=44 * mm))
        photos = first.member_photos
        if photos:
            head.append(_photo_table(photos, st, f"member {esc(first.member_title or first.location)}"))
        out.append(KeepTogether(head))
        if first.checks:
            out.append(_engineering(first, st, [i.number for i in group]))
    for item in group:
        grid_rows = _item_rows(item, st, group)
        parts: list[Any] = [
            Spacer(1, 4),
            _ItemHeading(f"Item {esc(item.number)}", st["h3"], refs, item_key(item)),
            _continued(_grid(grid_rows, [30 * mm, 144 * mm], table=_ContinuedTable), f"Item {esc(item.number)}", st),
        ]
        if not item.member and item.sketch is not None:
            parts.append(beam_sketch(item.sketch, width_pt=WIDTH, height_pt=44 * mm))
        if not item.member and item.checks:
            parts.append(_engineering(item, st, [item.number]))
        if item.photos:
            parts.append(_photo_table(item.photos, st, f"item {esc(item.number)}"))
        out.append(KeepTogether(parts))
    return out


def passes_as_installed(item: Item, numbers: list[str]) -> str:
    """One line for a member whose every check passes yet carries items: why 'ok' sits beside a deficiency.

    '' when a check fails or is not established (the checks then explain the item themselves).
    """
    if not item.checks or any(c.utilisation is None or c.utilisation > 1.0 for c in item.checks):
        return ""
    top = max(item.checks, key=lambda c: c.utilisation or 0.0)
    which = "Item " + numbers[0] if len(numbers) == 1 else "Items " + ", ".join(numbers)
    return (
        "<b>Passes as installed, still a deficiency:</b> every check above is within capacity for the member as it "
        f"is installed; the highest utilisation is {utilisation_text(top.utilisation)}, for {esc(top.name)}. "
        f"{esc(which)} below "
        "still records a condition that passing the check does not clear (it departs from the drawings, the "
        "specification or good practice): the engineer of record accepts it, or it is corrected."
    )


def _engineering(item: Item, st: dict[str, ParagraphStyle], numbers: list[str] | None = None) -> KeepTogether:
    """The numbers that matter, for the engineer of record: demand vs capacity, utilisation, options."""
    s = st["small"]
    bold = ParagraphStyle("sb", parent=s, fontName=FONT_BOLD)
    rows: list[list[Any]] = [
        [Paragraph(h, st["bold"]) for h in ("Check", "Demand", "Capacity", "Utilisation", "Clause")]
    ]
    for c in item.checks:
        if c.utilisation is None:
            util, style = "not established, taken as failing", bold
        else:
            fails = c.utilisation > 1.0
            util, style = utilisation_text(c.utilisation) + (" FAILS" if fails else " ok"), (bold if fails else s)
        rows.append(
            [
                Paragraph(esc(c.name), s),
                Paragraph(esc(c.demand) + (f"<br/>under {esc(c.combination)}" if c.combination else ""), s),
                Paragraph(esc(c.capacity), s),
                Paragraph(esc(util), style),
                Paragraph(esc(c.clause), s),
            ]
        )
    # named: when the table starts a page, the member's heading is on the page before
    of = f", {esc(item.member_title)}" if item.member_title else ""
    parts: list[Any] = [
        Paragraph(f"Engineering detail{of} (for the engineer of record)", st["h3"]),
        _continued(
            _grid(
                rows,
                [34 * mm, 42 * mm, 42 * mm, 28 * mm, 28 * mm],
                shade_first_col=False,
                repeat=1,
                table=_ContinuedTable,
            ),
            f"Engineering detail{of}",
            st,
        ),
    ]
    passing = passes_as_installed(item, numbers or [item.number])
    if passing:
        parts.append(Paragraph(passing, st["base"]))
    if item.options:
        # not "would make it pass": an option is listed with the utilisation its recheck gave, which may be over 1
        # (restraining a bearing alone can leave the member failing)
        parts.append(
            Paragraph(
                "<b>Options, each rechecked (for the engineer of record; not a design):</b> an option passes only "
                "where the utilisation it gives is 1.00 or less.",
                s,
            )
        )
        parts += [Paragraph("• " + esc(o), s) for o in item.options]
    return KeepTogether(parts)


def _signature(n: Notice, st: dict[str, ParagraphStyle]) -> KeepTogether:
    p = st["base"]
    licence = ", ".join(
        x for x in (n.reviewer_designation, f"licence {n.reviewer_licence}" if n.reviewer_licence else "") if x
    )
    if n.signature_png:
        from reportlab.lib.utils import ImageReader

        reader = ImageReader(io.BytesIO(n.signature_png))
        w, h = reader.getSize()
        scale = min(60 * mm / w, 18 * mm / h)
        sig: Any = Image(io.BytesIO(n.signature_png), width=w * scale, height=h * scale, hAlign="LEFT")
    else:
        # no scanned signature: a line to sign by hand (a setup message has no place on a signed document)
        sig = Paragraph("<br/><br/>Signature: ________________________", st["base"])
    lines = Paragraph(
        # phone and e-mail on lines of their own: the narrow column broke the address mid-word ("tamarack.exampl / e")
        "<br/>".join(
            esc(x)
            for x in (n.reviewer, licence, n.firm, n.reviewer_phone, n.reviewer_email, f"Date: {n.issued_on}")
            if x
        ),
        p,
    )
    cols: list[Any] = [[Paragraph("Reviewer", st["bold"]), sig, lines]]
    widths = [24 * mm, 66 * mm, 84 * mm]
    if n.seal:
        cols = [[cols[0][0], sig, lines, Paragraph("Seal", st["bold"])]]
        widths = [24 * mm, 60 * mm, 56 * mm, 34 * mm]
    t = _grid(cols, widths)
    t.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "MIDDLE"), ("BOTTOMPADDING", (0, 0), (-1, -1), 10)]))
    return KeepTogether([Paragraph("Signed", st["h2"]), t])


def _table_rows(n: Notice, st: dict[str, ParagraphStyle]) -> list[Any]:
    """The table rows the rechecks used with their status, and the reviewer's acknowledgement of memory rows."""
    if not n.table_rows:
        return []
    memory = len(memory_rows(n.table_rows))
    story: list[Any] = [
        Paragraph("Table rows the rechecks used", st["h2"]),
        Paragraph(
            f"{len(n.table_rows)} rows; {memory} MEMORY: entered from memory, not yet checked against the standard's "
            "text; confirmed: agrees with an independent source; verified: checked against the text. A clause marked "
            "(memory) in a check's Clause column is a clause or formula entered from memory; the values a check reads "
            "from a table are the rows below, each with its own status.",
            st["base"],
        ),
    ]
    if n.memory_acknowledgement:
        story.append(Paragraph(f"<b>Memory rows {esc(n.memory_acknowledgement)}.</b>", st["base"]))
    rows = [[Paragraph(h, st["bold"]) for h in ("Status", "Clause and row")]]
    rows += [[Paragraph(esc(r.status_short), st["small"]), Paragraph(esc(r.label), st["small"])] for r in n.table_rows]
    table = _grid(rows, [30 * mm, 144 * mm], shade_first_col=False, repeat=1, table=_ContinuedTable)
    story.append(_continued(table, "Table rows the rechecks used", st))
    return story


def render_notice(n: Notice, stamp_hash: bool = False) -> bytes:
    """Render a notice to PDF bytes (same content gives the same bytes).

    With ``stamp_hash`` the PDF carries its own SHA-256 (see ``reports.stamp``): in the metadata and,
    in short form, in every page footer.
    """
    st = _styles()
    buf = io.BytesIO()
    kind = "Close-out notice" if n.kind == "close-out" else "Deficiency notice"
    rev = f" rev {n.revision}" if n.revision else ""
    footer = f"{n.notice_number}{rev} · {n.site_name}"
    page = PAGE_SIZES.get(n.page_size, LETTER)
    doc = SimpleDocTemplate(
        buf,
        pagesize=page,
        leftMargin=18 * mm,
        rightMargin=18 * mm,
        topMargin=15 * mm,
        bottomMargin=18 * mm + footer_extra(footer, page[0], stamp_hash),
        title=f"{kind} {n.notice_number}{rev}, {n.site_name}",
        author=n.reviewer,
        subject=f"{kind} to {n.addressed_to}",
        keywords=stamp.placeholder_keywords() if stamp_hash else "",
        lang="en",
        displayDocTitle=1,
        invariant=1,
        pageCompression=0 if stamp_hash else None,
    )
    refs = PageRefs()
    story = _first_page(n, st, refs)
    if n.closeout:
        story.append(Paragraph("Re-review outcome per item", st["h2"]))
        rows = [[Paragraph(h, st["bold"]) for h in ("Item", "Outcome", "Evidence")]]
        rows += [
            [Paragraph(esc(a), st["base"]), Paragraph(esc(b), st["bold"]), Paragraph(esc(c), st["base"])]
            for a, b, c in n.closeout
        ]
        story.append(_grid(rows, [28 * mm, 40 * mm, 106 * mm], shade_first_col=False, repeat=1))
    if n.items:
        story.append(PageBreak())
        story.append(Paragraph("Items by member", st["h2"]))
        for group in by_member(n.items):
            story += _member_block(group, st, refs)
    if n.carried:
        story.append(Paragraph("Items carried forward from earlier notices", st["h2"]))
        rows = [[Paragraph(h, st["bold"]) for h in ("Item", "Location", "Description", "Status")]]
        rows += [
            [
                Paragraph(esc(c.number), st["base"]),
                Paragraph(esc(c.location), st["base"]),
                Paragraph(esc(c.description), st["base"]),
                Paragraph(esc(c.status), st["base"]),
            ]
            for c in n.carried
        ]
        carried = _grid(
            rows, [28 * mm, 40 * mm, 76 * mm, 30 * mm], shade_first_col=False, repeat=1, table=_ContinuedTable
        )
        story.append(_continued(carried, "Items carried forward from earlier notices", st, "continue"))
    story += _table_rows(n, st)
    # kept together: the heading never ends a page with its cautions on the next
    story.append(
        KeepTogether([Paragraph("Cautions", st["h2"]), *(Paragraph("• " + esc(c), st["small"]) for c in n.cautions)])
    )
    story += [Spacer(1, 8), _signature(n, st)]

    class _Canvas(NumberedCanvas):
        footer_left = footer
        footer_right = stamp.placeholder_footer() if stamp_hash else ""
        draft = n.draft
        page_refs = refs
        issued_on = n.issued_on[:10]

    doc.build(story, canvasmaker=_Canvas)
    pdf = buf.getvalue()
    return stamp.stamp(pdf) if stamp_hash else pdf


def render_recheck_sheet(beam: Beam, result: Recheck, site_name: str = "", note: str = "", prepared: str = "") -> bytes:
    """A one-beam calculation sheet: inputs in words, a sketch, every check, every factor with its clause.

    Each factor carries its table row and status (verified, confirmed, memory, formula). The checks are
    the same ``check_lines`` the app, ``check --text`` and the notice print; the traces are each check's
    own (``check_trace``), so every number on the sheet can be followed to a clause. ``note`` says where
    the loads came from; ``prepared`` when, with what and from what the sheet was made (the bytes depend
    only on the arguments).
    """
    st = _styles()
    buf = io.BytesIO()
    mark = beam.mark
    width = 186 * mm  # Letter less 15 mm margins
    doc = SimpleDocTemplate(
        buf,
        pagesize=LETTER,
        leftMargin=15 * mm,
        rightMargin=15 * mm,
        topMargin=15 * mm,
        bottomMargin=18 * mm,
        title=f"Recheck sheet {mark}",
        invariant=1,
    )
    status = result.status.value.upper().replace("_", " ")
    story: list[Any] = [
        Paragraph(f"Recheck sheet: {esc(mark)}, {esc(status)}", st["title"]),
        Paragraph(esc(site_name or "Rechecked from a beam file, not from a stored site"), st["base"]),
    ]
    why = _status_reason(result)
    if why:
        story.append(Paragraph(esc(why), st["bold"]))
    story += [Paragraph(esc(x), st["small"]) for x in (prepared, note) if x]
    story.append(Paragraph("Inputs as recorded", st["h2"]))
    rows = [[Paragraph(esc(k), st["bold"]), Paragraph(esc(v), st["small"])] for k, v in input_rows(beam)]
    story.append(_grid(rows, [52 * mm, 134 * mm]))
    story.append(
        KeepTogether([Spacer(1, 4), beam_sketch(member_sketch(beam, result), width_pt=width, height_pt=44 * mm)])
    )
    cases = case_table(beam)
    story += _load_cases(cases, result, st)
    case_number = {row.combination: row.number for row in cases.cases}
    lines = check_lines(result)  # the same check lines as the app, the text output and the notice
    rows = [[Paragraph(h, st["bold"]) for h in ("Check", "Demand", "Capacity", "Utilisation", "Clause")]]
    words = ParagraphStyle("words", parent=st["small"], wordWrap=None)  # narrow cells break between words only
    rows += [[Paragraph(esc(x), words) for x in row] for row in _check_rows(result, case_number)]
    grid = _grid(rows, [42 * mm, 26 * mm, 52 * mm, 26 * mm, 40 * mm], shade_first_col=False, repeat=1)
    # the heading and header row stay with the first checks (they sat alone at a page foot); a split repeats the header
    story.append(KeepTogether([Paragraph("Checks", st["h2"]), grid]))
    regions = {f"bending{i}": r for i, r in enumerate(result.bending)}  # by CheckLine.key
    for c in lines:
        region = regions.get(c.key)
        head = c.name if region is None else f"{c.name}: {_outcome_words(region)}"
        section: list[Any] = [Paragraph(esc(head[:1].upper() + head[1:]), st["h2"])]
        basis = [f"rests on {c.factors}"] if c.factors else []
        if c.combination:
            number = case_number.get(c.combination)
            basis.append(f"governing: {c.combination}" + ("" if number is None else f" (load case {number})"))
        if region is not None:
            basis.append(f"compression edge: {region.compression_edge}")
        if basis:
            section.append(Paragraph(esc(typeset("; ".join(basis))), st["base"]))
        head_row = [Paragraph(h, st["bold"]) for h in ("Factor", "Value", "Clause", "Source / table row", "Status")]
        trows = [head_row] + [
            [
                Paragraph(esc(t.symbol), words),
                Paragraph(esc(trace_value(t.value)) + " " + esc(typeset(t.unit)), words),
                Paragraph(esc(t.clause), st["small"]),
                Paragraph(esc(typeset(t.source)), st["small"]),
                Paragraph(esc(t.status), st["small"]),
            ]
            for t in check_trace(result, c.key)
        ]
        section.append(_grid(trows, [32 * mm, 24 * mm, 34 * mm, 76 * mm, 20 * mm], shade_first_col=False))
        story.append(KeepTogether(section))  # a check's heading never sits alone at a page foot
    found: list[list[Any]] = [
        [
            Paragraph(
                f"<b>{esc(SHORT_PRIORITY.get(f.priority.value, f.priority.value))}</b>"
                f"{esc(f', {f.region}' if f.region else '')}: "
                f"{esc(f.message)} <b>Action:</b> {esc(f.action)} ({esc(f.clause)})",
                st["base"],
            ),
            Spacer(1, 3),
        ]
        for f in result.findings or []
    ] or [[Paragraph("None.", st["base"])]]
    # a finding is never split across a page (its action read apart from its message), and the heading stays
    # with the first one
    found[0].insert(0, Paragraph("Findings", st["h2"]))
    # the closing caution and the signature boxes stay with the last finding (or the "None." under the heading):
    # a signature alone on a page can be parted from what it signs (common practice for a sealed document)
    found[-1] += [Spacer(1, 6), Paragraph(esc(result.caution), st["small"]), Spacer(1, 4), _sign_off(st)]
    story += [KeepTogether(one) for one in found]

    class _Canvas(NumberedCanvas):
        footer_left = f"recheck sheet {mark}"

    doc.build(story, canvasmaker=_Canvas)
    return buf.getvalue()


def _check_rows(result: Recheck, case_number: dict[str, int]) -> list[tuple[str, str, str, str, str]]:
    """The sheet's checks table: every check line, and after a bearing that lifts, its uplift row.

    The check lines are those the app and the notice print (``check_lines``); the uplift row is the sheet's
    own (``content.uplift_row``), so a beam that fails only through uplift shows a failing row here.
    """
    regions = {f"bending{i}": r for i, r in enumerate(result.bending)}  # by CheckLine.key
    lifts = lifting_bearings(result)
    rows = []
    for c in check_lines(result):
        util = _utilisation_words(c.utilisation, regions.get(c.key))
        rows.append((c.name, c.demand, c.capacity, util, c.clause))
        if c.key in lifts:
            rows.append(uplift_row(lifts[c.key], result, case_number))
    return rows


def _status_reason(result: Recheck) -> str:
    """Why the sheet's status is not OK, under its title: how many findings to act on and the most urgent."""
    acting = [f for f in result.findings or [] if f.priority.value != "observation"]
    if not acting:
        return ""
    first = acting[0]  # findings come most urgent first
    count = f"{len(acting)} finding{'s' if len(acting) != 1 else ''} to act on"
    return (
        f"{count}; the most urgent: {SHORT_PRIORITY.get(first.priority.value, first.priority.value)}: {first.message}"
    )


def _outcome_words(region: BendingRegion) -> str:
    """A bending region's outcome in words; a capacity not established that fails even at its upper bound says so."""
    words = region.outcome.replace("_", " ")
    upper = region.utilisation_if_restrained
    if region.outcome == Outcome.not_established and (upper is None or upper > 1.0):
        return f"{words}, fails even if its bearings were restrained (on the inputs as recorded and taken)"
    return words


def _utilisation_words(utilisation: float | None, region: BendingRegion | None) -> str:
    """The checks table's utilisation: the figure, or why there is none and what is known of it.

    Where the capacity is not established (a bearing's restraint missing or not seen), the capacity if
    restrained is an upper bound, so the utilisation it gives is a lower bound: the real one is at least that.
    Both rest on the inputs as recorded and on the unfavourable cases taken for what was not seen (the
    Inputs section names them: unfastened purlins, the weaker layup face), so the words say so.
    """
    if utilisation is not None:  # a failing check is marked in words as on the notice, not by its figure alone
        return f"{utilisation:.3f} FAILS" if utilisation > 1.0 else f"{utilisation:.3f}"
    if region is None:
        return "not established"
    if region.outcome == Outcome.not_permitted:
        return "none: not permitted (slenderness)"
    if region.outcome != Outcome.not_established:
        return "none"
    upper = region.utilisation_if_restrained
    if upper is None:
        return "not established; not permitted even if restrained"
    if upper > 1.0:
        return f"at least {upper:.3f}: fails even if restrained, on the inputs as recorded and taken"
    return f"not established; at least {upper:.3f}"


def _load_cases(table: CaseTable, result: Recheck, st: dict[str, ParagraphStyle]) -> list[Any]:
    """The sheet's load cases tried and support reactions (``reports.loadcases``), as two tables."""
    out: list[Any] = []
    for (heading, style), (sentences, rows), widths in (
        (("Load cases and reactions", "h2"), case_section(table, result), [8, 36, 9, 24, 14, 14, 11, 24, 46]),
        (("Reactions at each support", "h3"), reaction_section(table), [18, 18, 18, 18, 18, 48, 48]),
    ):
        cells = [
            [Paragraph(esc(x).replace("\n", "<br/>"), st["bold" if i == 0 else "small"]) for x in row]
            for i, row in enumerate(rows)
        ]
        grid = _grid(cells, [w * mm for w in widths], shade_first_col=False, repeat=1)
        # the heading and text stay with the table's first rows (a long table still splits, its header repeated)
        text = [Paragraph(esc(x), st["small"]) for x in sentences]
        head = [Paragraph(heading, st[style]), *text, Spacer(1, 2), grid]
        out += [KeepTogether(head), Spacer(1, 4)]
    return out


def _sign_off(st: dict[str, Any]) -> Table:
    """Blank boxes for the reviewer who checks the sheet (common practice on a calculation record)."""
    rows = [[Paragraph(h, st["bold"]) for h in ("Checked by", "Date", "Signature")], ["", "", ""]]
    t = Table(rows, colWidths=[80 * mm, 40 * mm, 66 * mm], rowHeights=[None, 14 * mm])
    t.setStyle(TableStyle([("GRID", (0, 0), (-1, -1), 0.5, colors.grey), ("VALIGN", (0, 0), (-1, -1), "TOP")]))
    return t
