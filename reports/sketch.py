"""Beam sketch (reportlab graphics): spans to scale, supports, braces, negative regions, restraint.

Status is shown by shape and words as well as colour, so it reads in black and white: a restrained
bearing is a solid triangle with "R"; an unrestrained one a hollow triangle with a cross and "NOT R";
one whose restraint was not seen "R?", and the legend names the restraint not seen at each. A fastened
purlin is a solid square, one not fastened or whose fastening was not recorded a hollow one (taken as
not fastened); decking likewise a solid or a dashed line.
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import resources

from reportlab.graphics.shapes import Drawing, Line, Polygon, Rect, String
from reportlab.lib import colors
from reportlab.lib.utils import simpleSplit
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.pdfbase.ttfonts import TTFont

from reports.content import Sketch, ft_in

FONT = "BWSans"
FONT_BOLD = "BWSans-Bold"
LABEL_GAP_PT = 4.0  # least room between two span labels side by side


def register_fonts() -> None:
    """Register the sheet's and the notice's fonts (DejaVu Sans, shipped in reports/fonts) once per process."""
    if FONT in pdfmetrics.getRegisteredFontNames():
        return
    base = resources.files("reports").joinpath("fonts")
    pdfmetrics.registerFont(TTFont(FONT, str(base.joinpath("DejaVuSans.ttf"))))
    pdfmetrics.registerFont(TTFont(FONT_BOLD, str(base.joinpath("DejaVuSans-Bold.ttf"))))
    pdfmetrics.registerFontFamily(FONT, normal=FONT, bold=FONT_BOLD, italic=FONT, boldItalic=FONT_BOLD)


@dataclass(frozen=True)
class _Frame:
    """Where the member is drawn: left margin and scale (pt per mm), the member's baseline and depth, pt."""

    margin: float
    scale: float
    y: float
    depth: float = 10.0
    fs: int = 8  # nothing on the notice below 8 pt

    def x_of(self, mm: float) -> float:
        """The drawing's x (pt) of a point ``mm`` from the member's left end."""
        return self.margin + mm * self.scale


def beam_sketch(sk: Sketch, width_pt: float = 460, height_pt: float = 120) -> Drawing:
    """A drawing that locates the member: title (mark, level, grid), supports by gridline, spans, legend."""
    register_fonts()
    legend = legend_lines(sk, width_pt, _Frame.fs)
    extra = LEGEND_STEP_PT * (len(legend) - 2)  # the drawing grows by any legend line past two
    height_pt += extra
    d = Drawing(width_pt, height_pt)
    total = sum(length for _, _, length in sk.elements) or 1.0
    margin = 40.0
    f = _Frame(margin=margin, scale=(width_pt - 2 * margin) / total, y=height_pt - 46)
    if sk.title:
        d.add(String(0, height_pt - 10, sk.title, fontName=FONT, fontSize=9))
    _member(d, sk, f, total)
    _braces(d, sk, f)
    for i, (sx, state) in enumerate(zip(sk.supports_x, sk.restrained, strict=True)):
        name = sk.support_labels[i] if i < len(sk.support_labels) else f"S{i + 1}"
        _support(d, f, f.x_of(sx), i, state, name if sk.support_labels else "")
    _spans(d, sk, f)
    for k, line in enumerate(reversed(legend)):
        d.add(String(0, LEGEND_BASE_PT + LEGEND_STEP_PT * k, line, fontName=FONT, fontSize=f.fs))
    return d


def _member(d: Drawing, sk: Sketch, f: _Frame, total: float) -> None:
    """Negative-moment shading, the member's outline and the decking line."""
    for x0, x1 in sk.negative:
        d.add(
            Rect(
                f.x_of(x0),
                f.y - 2,
                (x1 - x0) * f.scale,
                f.depth + 4,
                fillColor=colors.Color(0.8, 0.8, 0.8),
                strokeColor=None,
            )
        )
    d.add(Rect(f.x_of(0), f.y, total * f.scale, f.depth, fillColor=None, strokeColor=colors.black, strokeWidth=1.2))
    if sk.decking:
        top = f.y + f.depth + 3
        dashes = None if sk.top_fastened is True else [6, 3]  # decking not fastened: dashed
        d.add(Line(f.x_of(0), top, f.x_of(total), top, strokeColor=colors.black, strokeWidth=2, strokeDashArray=dashes))


def _braces(d: Drawing, sk: Sketch, f: _Frame) -> None:
    """Purlins (squares, marked P1, P2, ... when there are 12 or fewer) and bottom braces (triangles).

    A purlin not fastened, or whose fastening was not recorded (taken as not fastened), is a hollow square.
    """
    y, depth = f.y, f.depth
    fill = colors.black if sk.top_fastened is True else colors.white
    for k, bx in enumerate(sk.braces_top_x, start=1):
        d.add(Rect(f.x_of(bx) - 2.5, y + depth, 5, 5, fillColor=fill, strokeColor=colors.black, strokeWidth=1))
        if len(sk.braces_top_x) <= 12:
            d.add(String(f.x_of(bx), y + depth + 8, f"P{k}", fontName=FONT, fontSize=f.fs, textAnchor="middle"))
    for bx in sk.braces_bottom_x:
        d.add(Polygon([f.x_of(bx) - 3, y - 5, f.x_of(bx) + 3, y - 5, f.x_of(bx), y], fillColor=colors.black))


CROSS_LOW = 16  # pt below the member's baseline: the cross's lowest point, above the label's ascent (y - 25 + 7.4)


def _support(d: Drawing, f: _Frame, px: float, i: int, state: str, grid: str) -> None:
    """One bearing: solid triangle and "R" when restrained, hollow with a cross otherwise; its gridline."""
    y = f.y
    tri = [px - 7, y - 14, px + 7, y - 14, px, y]
    if state == "restrained":
        d.add(Polygon(tri, fillColor=colors.black, strokeColor=colors.black))
        state_word = "R"
    else:
        d.add(Polygon(tri, fillColor=colors.white, strokeColor=colors.black, strokeWidth=1.5))
        # the cross over the hollow triangle, clear of the label below it (it reached into "S2 NOT R")
        d.add(Line(px - 6, y - CROSS_LOW, px + 6, y - 4, strokeColor=colors.black, strokeWidth=1.5))
        d.add(Line(px - 6, y - 4, px + 6, y - CROSS_LOW, strokeColor=colors.black, strokeWidth=1.5))
        state_word = "NOT R" if state == "NOT restrained" else "R?"
    d.add(String(px, y - 25, f"S{i + 1} {state_word}", fontName=FONT, fontSize=f.fs, textAnchor="middle"))
    if grid:
        d.add(String(px, y - 35, f"grid {grid}", fontName=FONT_BOLD, fontSize=f.fs, textAnchor="middle"))


def _spans(d: Drawing, sk: Sketch, f: _Frame) -> None:
    """Each span and overhang with its length in m and ft-in."""
    for kind, x0, length in sk.elements:
        mid = f.x_of(x0 + length / 2)
        word, metres = ("overhang" if kind == "overhang" else "span"), f"{length / 1000:.2f} m"
        room = length * f.scale - LABEL_GAP_PT  # a label wider than its element would run into its neighbour's
        labels = (f"{word} {metres} ({ft_in(length)})", f"{word} {metres}", metres)
        label = next((t for t in labels if stringWidth(t, FONT, f.fs) <= room), metres)
        d.add(Line(f.x_of(x0), f.y - 40, f.x_of(x0 + length), f.y - 40, strokeColor=colors.black, strokeWidth=0.5))
        d.add(String(mid, f.y - 50, label, fontName=FONT, fontSize=f.fs, textAnchor="middle"))


LEGEND_STEP_PT = 10.0  # from one legend line to the next
LEGEND_BASE_PT = 2.0  # the last line's baseline: its descenders (1.9 pt at 8 pt) stay inside the drawing


def legend_lines(sk: Sketch, width_pt: float, fs: int) -> list[str]:
    """The symbols' legend in words (reads in black and white), wrapped to the drawing's width.

    The bearings' symbols first, with the restraint not seen at each "R?" support; then the top edge
    (purlins or decking as drawn, and how their fastening was taken) and the negative-moment shading.
    """
    bearings = ["▲ R restrained at bearing", "△✕ NOT R not restrained", _not_seen_words(sk)]
    top = [_top_edge_words(sk), "grey: negative moment, bottom edge in compression"]
    return _wrapped(bearings, width_pt, fs) + _wrapped([t for t in top if t], width_pt, fs)


def _not_seen_words(sk: Sketch) -> str:
    """'R? not seen, taken as not restrained: lateral displacement at S1; rotation at S1, S3' (each support named)."""
    at: dict[str, list[str]] = {}
    for i, (state, words) in enumerate(zip(sk.restrained, sk.not_seen, strict=False)):
        if state == "not visible":
            for word in words:
                at.setdefault(word, []).append(f"S{i + 1}")
    if not at:
        return "R? not seen (taken as not restrained)"
    which = "; ".join(f"{word} at {', '.join(names)}" for word, names in at.items())
    return f"R? not seen, taken as not restrained: {which}"


def _top_edge_words(sk: Sketch) -> str:
    """How the top edge is drawn: purlins or decking, solid when fastened, hollow or dashed when taken as not."""
    taken = {
        True: "fastened (top-edge brace)",
        False: "not fastened (not a brace)",
        None: "fastening not recorded: taken as not fastened (not a brace)",
    }[sk.top_fastened]
    if sk.braces_top_x:
        return f"{'■' if sk.top_fastened is True else '□'} P purlin, {taken}"
    if sk.decking:
        return f"{'thick' if sk.top_fastened is True else 'dashed'} top line: decking, {taken}"
    return ""


def _wrapped(entries: list[str], width_pt: float, fs: int) -> list[str]:
    """Entries joined by ' · ' into lines no wider than ``width_pt``.

    A line breaks between entries; an entry wider than a line breaks between its words.
    """
    lines: list[str] = []
    for entry in entries:
        joined = f"{lines[-1]} · {entry}" if lines else entry
        if lines and stringWidth(joined, FONT, fs) <= width_pt:
            lines[-1] = joined
            continue
        lines += simpleSplit(entry, FONT, fs, width_pt)
    return lines
