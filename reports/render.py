"""Render a notice or a recheck sheet to PDF bytes (reportlab Platypus, invariant output)."""

from __future__ import annotations

import io
from importlib import resources
from typing import Any

from reportlab import rl_config
from reportlab.lib import colors
from reportlab.lib.pagesizes import LETTER
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.pdfgen import canvas as rl_canvas
from reportlab.platypus import (
    Image,
    KeepTogether,
    Paragraph,
    SimpleDocTemplate,
    Spacer,
    Table,
    TableStyle,
)

from core.results import Recheck
from reports.content import Item, Notice
from reports.photos import prepare_photo
from reports.sketch import FONT, beam_sketch
from reports.textrun import markup

# Binary (Flate/DCT) streams instead of ASCII85: reportlab's pure-Python ASCII85 encoder was most of
# the time of a notice with photos, and binary streams are a fifth smaller. Process-wide by design.
rl_config.useA85 = 0

FONT_BOLD = "BWSans-Bold"
PRIORITY_WORDS = {
    "immediate": "IMMEDIATE: make safe now",
    "before_loading": "Before loading or concealment",
    "before_next_review": "Before next review",
    "observation": "Observation",
}
PRIORITY_MARKERS = {"immediate": "▲", "before_loading": "●", "before_next_review": "○", "observation": "○"}


def priority_label(priority: str) -> str:
    """Priority by shape and words ('▲ IMMEDIATE: make safe now'), the same on the notice and in the app."""
    return f"{PRIORITY_MARKERS.get(priority, '○')} {PRIORITY_WORDS.get(priority, priority)}"


def _register_fonts() -> None:
    if FONT in pdfmetrics.getRegisteredFontNames():
        return
    base = resources.files("reports").joinpath("fonts")
    pdfmetrics.registerFont(TTFont(FONT, str(base.joinpath("DejaVuSans.ttf"))))
    pdfmetrics.registerFont(TTFont(FONT_BOLD, str(base.joinpath("DejaVuSans-Bold.ttf"))))
    pdfmetrics.registerFontFamily(FONT, normal=FONT, bold=FONT_BOLD, italic=FONT, boldItalic=FONT_BOLD)


def esc(text: object) -> str:
    """Escape user text for a Paragraph: markup characters appear as typed, any script prints (textrun)."""
    _register_fonts()
    return markup(text, FONT)


class NumberedCanvas(rl_canvas.Canvas):
    """Canvas that prints 'page X of Y' and the notice number on every page."""

    footer_left = ""
    draft = False

    def __init__(self, *args: Any, **kwargs: Any):
        kwargs.setdefault("invariant", 1)
        super().__init__(*args, **kwargs)
        self._pages: list[dict[str, Any]] = []

    def showPage(self) -> None:
        """Hold each page until the total is known."""
        self._pages.append(dict(self.__dict__))
        self._startPage()

    def save(self) -> None:
        """Stamp every held page with its number of the total, then write."""
        total = len(self._pages)
        for state in self._pages:
            self.__dict__.update(state)
            self.setFont(FONT, 7.5)
            self.drawString(18 * mm, 10 * mm, self.footer_left)
            self.drawRightString(LETTER[0] - 18 * mm, 10 * mm, f"page {self._pageNumber} of {total}")
            if self.draft:
                self.setFont(FONT_BOLD, 11)
                self.setFillColor(colors.red)
                self.drawCentredString(LETTER[0] / 2, LETTER[1] - 9 * mm, "DRAFT PREVIEW: NOT ISSUED, NOT FOR USE")
                self.setFillColor(colors.black)
            super().showPage()
        super().save()


def _styles() -> dict[str, ParagraphStyle]:
    _register_fonts()
    base = ParagraphStyle("base", fontName=FONT, fontSize=9, leading=11.5, wordWrap="CJK")
    return {
        "base": base,
        "small": ParagraphStyle("small", parent=base, fontSize=7.5, leading=9.5),
        "title": ParagraphStyle("title", parent=base, fontName=FONT_BOLD, fontSize=15, leading=19),
        "h2": ParagraphStyle("h2", parent=base, fontName=FONT_BOLD, fontSize=11, leading=14, spaceBefore=6),
        "bold": ParagraphStyle("bold", parent=base, fontName=FONT_BOLD),
    }


def _grid(rows: list[list[Any]], widths: list[float], shade_first_col: bool = True) -> Table:
    # splitInRow: a cell taller than a page (a long description) continues on the next page
    t = Table(rows, colWidths=widths, splitInRow=1)
    style = [
        ("GRID", (0, 0), (-1, -1), 0.4, colors.grey),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 3),
    ]
    if shade_first_col:
        style.append(("BACKGROUND", (0, 0), (0, -1), colors.Color(0.93, 0.93, 0.93)))
    t.setStyle(TableStyle(style))
    return t


def _header(n: Notice, st: dict[str, ParagraphStyle]) -> list[Any]:
    p = st["base"]
    rev = f" rev {n.revision}" if n.revision else ""
    story: list[Any] = [
        Paragraph(f"Field review: deficiency notice {esc(n.notice_number)}{rev}", st["title"]),
        Spacer(1, 4),
    ]
    rows = [
        ["Site", Paragraph(esc(n.site_name), p), "Notice", Paragraph(esc(n.notice_number + rev), p)],
        ["Address", Paragraph(esc(n.address), p), "Issued", Paragraph(esc(n.issued_on), p)],
        ["Permit no.", Paragraph(esc(n.permit_number), p), "Visit", Paragraph(esc(n.visit_at), p)],
        ["Project no.", Paragraph(esc(n.project_number), p), "Weather", Paragraph(esc(n.weather), p)],
        ["Reviewer", Paragraph(esc(n.reviewer), p), "Firm", Paragraph(esc(n.firm), p)],
        ["To", Paragraph(esc(n.addressed_to), p), "Copies", Paragraph(esc(", ".join(n.distribution)), p)],
    ]
    rows = [[Paragraph(c, st["bold"]) if isinstance(c, str) else c for c in r] for r in rows]
    t = _grid(rows, [22 * mm, 68 * mm, 20 * mm, 68 * mm])
    t.setStyle(TableStyle([("BACKGROUND", (2, 0), (2, -1), colors.Color(0.93, 0.93, 0.93))]))
    story += [t, Spacer(1, 4)]
    if n.change_note:
        story.append(Paragraph(f"<b>Revision:</b> {esc(n.change_note)}", p))
    story.append(Paragraph(f"<b>Scope reviewed:</b> {esc(n.scope_reviewed)}", p))
    story.append(Paragraph(f"<b>Not reviewed:</b> {esc(n.scope_not_reviewed)}", p))
    immediate = sum(1 for i in n.items if i.priority == "immediate")
    if immediate:
        story.append(Spacer(1, 4))
        box = Table(
            [
                [
                    Paragraph(
                        f"<b>{immediate} IMMEDIATE item(s):</b> make the area safe now (keep loads off, "
                        "shore or brace) and tell the contractor on site before this notice arrives.",
                        st["base"],
                    )
                ]
            ],
            colWidths=[178 * mm],
        )
        box.setStyle(
            TableStyle(
                [
                    ("BOX", (0, 0), (-1, -1), 2, colors.black),
                    ("BACKGROUND", (0, 0), (-1, -1), colors.Color(1, 0.9, 0.85)),
                ]
            )
        )
        story.append(box)
    return story


def _item(item: Item, st: dict[str, ParagraphStyle]) -> KeepTogether:
    p = st["base"]
    rows = [
        [Paragraph("Location", st["bold"]), Paragraph(esc(item.location), p)],
        [Paragraph("Observed", st["bold"]), Paragraph(esc(item.observed), p)],
        [Paragraph("Finding", st["bold"]), Paragraph(esc(item.finding), p)],
        [Paragraph("Reference", st["bold"]), Paragraph(esc(item.reference), p)],
        [Paragraph("Required action", st["bold"]), Paragraph(esc(item.action), p)],
        [Paragraph("Priority", st["bold"]), Paragraph(esc(priority_label(item.priority)), st["bold"])],
        [Paragraph("Due", st["bold"]), Paragraph(esc(item.due or PRIORITY_WORDS.get(item.priority, "")), p)],
    ]
    if item.key_numbers:
        nums = "<br/>".join(f"{esc(k)}: {esc(v)}" for k, v in item.key_numbers)
        rows.append([Paragraph("Recheck", st["bold"]), Paragraph(nums, st["small"])])
    parts: list[Any] = [Spacer(1, 6), Paragraph(f"Item {esc(item.number)}", st["h2"]), _grid(rows, [30 * mm, 148 * mm])]
    if item.sketch is not None:
        parts.append(beam_sketch(item.sketch, width_pt=178 * mm, height_pt=30 * mm))
    if item.photos:
        cells = []
        for content in item.photos[:3]:
            jpeg, w, h = prepare_photo(content)
            scale = min(55 * mm / w, 40 * mm / h)
            cells.append(Image(io.BytesIO(jpeg), width=w * scale, height=h * scale))
        parts.append(Table([cells], hAlign="LEFT"))
    return KeepTogether(parts)


def render_notice(n: Notice) -> bytes:
    """Render a deficiency notice to PDF bytes (same content gives the same bytes)."""
    st = _styles()
    buf = io.BytesIO()
    doc = SimpleDocTemplate(
        buf,
        pagesize=LETTER,
        leftMargin=18 * mm,
        rightMargin=18 * mm,
        topMargin=15 * mm,
        bottomMargin=18 * mm,
        title=f"Deficiency notice {n.notice_number}",
        author=n.reviewer,
        invariant=1,
    )
    story = _header(n, st)
    story.append(Paragraph("Deficiency items", st["h2"]))
    if not n.items:
        story.append(Paragraph("No open deficiencies.", st["base"]))
    for item in n.items:
        story.append(_item(item, st))
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
        story.append(_grid(rows, [28 * mm, 40 * mm, 80 * mm, 30 * mm], shade_first_col=False))
    story.append(Paragraph("Cautions", st["h2"]))
    for c in n.cautions:
        story.append(Paragraph("• " + esc(c), st["small"]))
    sig = _grid(
        [
            [Paragraph("Reviewer signature", st["bold"]), "", Paragraph("Seal", st["bold"])],
            [Paragraph(esc(n.reviewer), st["base"]), Paragraph("Date: " + esc(n.issued_on), st["base"]), ""],
        ],
        [70 * mm, 60 * mm, 48 * mm],
        shade_first_col=False,
    )
    sig.setStyle(
        TableStyle([("ROWBACKGROUNDS", (0, 0), (-1, -1), [colors.white]), ("TOPPADDING", (0, 1), (-1, 1), 28)])
    )
    story += [Spacer(1, 8), KeepTogether([Paragraph("Authentication", st["h2"]), sig])]
    footer = f"{n.notice_number} · {n.site_name}"

    class _Canvas(NumberedCanvas):
        footer_left = footer
        draft = n.draft

    doc.build(story, canvasmaker=_Canvas)
    return buf.getvalue()


def render_recheck_sheet(mark: str, beam_json: dict[str, Any], result: Recheck, site_name: str = "") -> bytes:
    """Render a one-beam recheck sheet: inputs, every factor with clause and status, every check."""
    st = _styles()
    buf = io.BytesIO()
    doc = SimpleDocTemplate(
        buf,
        pagesize=LETTER,
        leftMargin=15 * mm,
        rightMargin=15 * mm,
        topMargin=15 * mm,
        bottomMargin=18 * mm,
        title=f"Recheck {mark}",
        invariant=1,
    )
    story: list[Any] = [
        Paragraph(f"Recheck sheet: {esc(mark)} ({esc(result.status.value.replace('_', ' '))})", st["title"]),
        Paragraph(esc(site_name), st["base"]),
        Paragraph("Inputs", st["h2"]),
    ]
    rows = [[Paragraph(esc(k), st["bold"]), Paragraph(esc(v), st["small"])] for k, v in beam_json.items()]
    story.append(_grid(rows, [40 * mm, 146 * mm]))
    for r in result.bending:
        story.append(Paragraph(f"Bending, {esc(r.region)} ({esc(r.sign)} moment): {esc(r.outcome)}", st["h2"]))
        util = "-" if r.utilisation is None else f"{r.utilisation:.3f}"
        mr = "not established" if r.mr_knm is None else f"{r.mr_knm:.2f} kN·m"
        story.append(
            Paragraph(
                f"Mf {r.mf_knm:.2f} kN·m, Mr {esc(mr)}, utilisation {util}; governing "
                f"{esc(r.combination)}; compression edge: {esc(r.compression_edge)}",
                st["base"],
            )
        )
        head = [Paragraph(h, st["bold"]) for h in ("Factor", "Value", "Clause", "Source / table row", "Status")]
        trows = [head] + [
            [
                Paragraph(esc(t.symbol), st["small"]),
                Paragraph(esc(t.value) + " " + esc(t.unit), st["small"]),
                Paragraph(esc(t.clause), st["small"]),
                Paragraph(esc(t.source), st["small"]),
                Paragraph(esc(t.status), st["small"]),
            ]
            for t in r.trace
        ]
        story.append(_grid(trows, [22 * mm, 24 * mm, 36 * mm, 84 * mm, 20 * mm], shade_first_col=False))
    s = result.shear
    story.append(Paragraph("Shear, bearing, deflection", st["h2"]))
    rows = [[Paragraph(h, st["bold"]) for h in ("Check", "Demand", "Resistance / limit", "Utilisation", "Clause")]]
    rows.append(
        [
            Paragraph(f"shear ({esc(s.method)})", st["small"]),
            f"{s.vf_kn:.1f} kN",
            f"{s.vr_kn:.1f} kN",
            f"{s.utilisation:.3f}",
            Paragraph(esc(s.clause), st["small"]),
        ]
    )
    for b in result.bearing:
        rows.append(
            [
                f"bearing S{b.support}",
                f"{b.qf_kn:.1f} kN",
                f"{b.qr_kn:.1f} kN",
                f"{b.utilisation:.3f}",
                Paragraph(esc(b.clause), st["small"]),
            ]
        )
    d = result.deflection
    rows.append(
        [
            Paragraph(f"deflection {esc(d.case)}, {esc(d.element)}", st["small"]),
            f"{d.delta_mm:.1f} mm",
            f"{d.limit_mm:.1f} mm",
            f"{d.utilisation:.3f}",
            Paragraph(esc(d.clause), st["small"]),
        ]
    )
    story.append(_grid(rows, [46 * mm, 30 * mm, 36 * mm, 24 * mm, 50 * mm], shade_first_col=False))
    story.append(Paragraph("Findings", st["h2"]))
    for f in result.findings or []:
        story.append(
            Paragraph(
                f"<b>{esc(f.priority.value)}</b> {esc(f.code)}: {esc(f.message)} Action: "
                f"{esc(f.action)} ({esc(f.clause)})",
                st["base"],
            )
        )
    if not result.findings:
        story.append(Paragraph("None.", st["base"]))
    story.append(Spacer(1, 6))
    story.append(Paragraph(esc(result.caution), st["small"]))

    class _Canvas(NumberedCanvas):
        footer_left = f"recheck {mark}"

    doc.build(story, canvasmaker=_Canvas)
    return buf.getvalue()
