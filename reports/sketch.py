"""Beam sketch (reportlab graphics): spans to scale, supports, braces, negative regions, restraint.

Status is shown by shape and words as well as colour, so it reads in black and white: a restrained
bearing is a solid triangle with "R"; an unrestrained one a hollow triangle with a cross and "NOT R".
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import resources

from reportlab.graphics.shapes import Drawing, Line, Polygon, Rect, String
from reportlab.lib import colors
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
    _legend(d, sk, f.fs)
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
        d.add(Line(f.x_of(0), top, f.x_of(total), top, strokeColor=colors.black, strokeWidth=2))


def _braces(d: Drawing, sk: Sketch, f: _Frame) -> None:
    """Purlins (squares, marked P1, P2, ... when there are 12 or fewer) and bottom braces (triangles)."""
    y, depth = f.y, f.depth
    for k, bx in enumerate(sk.braces_top_x, start=1):
        d.add(Rect(f.x_of(bx) - 2.5, y + depth, 5, 5, fillColor=colors.black, strokeColor=colors.black))
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


def _legend(d: Drawing, sk: Sketch, fs: int) -> None:
    """The symbols' legend, in words (reads in black and white)."""
    legend = "▲ R restrained at bearing · △✕ NOT R not restrained · R? not seen (taken as not restrained)"
    legend2 = "■ P purlin (top-edge brace) · grey: negative moment, bottom edge in compression"
    if sk.decking:
        legend2 += " · thick top line: decking fastened"
    d.add(String(0, 11, legend, fontName=FONT, fontSize=fs))
    d.add(String(0, 1, legend2, fontName=FONT, fontSize=fs))
