"""Beam sketch (reportlab graphics): spans to scale, supports, braces, negative regions, restraint.

Status is shown by shape and words as well as colour, so it reads in black and white: a restrained
bearing is a solid triangle with "R"; an unrestrained one a hollow triangle with a cross and "NOT R".
"""

from __future__ import annotations

from reportlab.graphics.shapes import Drawing, Line, Polygon, Rect, String
from reportlab.lib import colors

from reports.content import Sketch, ft_in

FONT = "BWSans"
FONT_BOLD = "BWSans-Bold"


def beam_sketch(sk: Sketch, width_pt: float = 460, height_pt: float = 120) -> Drawing:
    """A drawing that locates the member: title (mark, level, grid), supports by gridline, spans, legend."""
    d = Drawing(width_pt, height_pt)
    total = sum(length for _, _, length in sk.elements) or 1.0
    margin = 40.0
    scale = (width_pt - 2 * margin) / total
    y = height_pt - 46
    depth = 10.0
    fs = 8  # nothing on the notice below 8 pt

    def x_of(mm: float) -> float:
        return margin + mm * scale

    if sk.title:
        d.add(String(0, height_pt - 10, sk.title, fontName=FONT, fontSize=9))
    for x0, x1 in sk.negative:
        d.add(
            Rect(x_of(x0), y - 2, (x1 - x0) * scale, depth + 4, fillColor=colors.Color(0.8, 0.8, 0.8), strokeColor=None)
        )
    d.add(Rect(x_of(0), y, total * scale, depth, fillColor=None, strokeColor=colors.black, strokeWidth=1.2))
    if sk.decking:
        d.add(Line(x_of(0), y + depth + 3, x_of(total), y + depth + 3, strokeColor=colors.black, strokeWidth=2))
    for k, bx in enumerate(sk.braces_top_x, start=1):
        d.add(Rect(x_of(bx) - 2.5, y + depth, 5, 5, fillColor=colors.black, strokeColor=colors.black))
        if len(sk.braces_top_x) <= 12:
            d.add(String(x_of(bx), y + depth + 8, f"P{k}", fontName=FONT, fontSize=fs, textAnchor="middle"))
    for bx in sk.braces_bottom_x:
        d.add(Polygon([x_of(bx) - 3, y - 5, x_of(bx) + 3, y - 5, x_of(bx), y], fillColor=colors.black))
    for i, (sx, state) in enumerate(zip(sk.supports_x, sk.restrained, strict=True)):
        px = x_of(sx)
        tri = [px - 7, y - 14, px + 7, y - 14, px, y]
        if state == "restrained":
            d.add(Polygon(tri, fillColor=colors.black, strokeColor=colors.black))
            state_word = "R"
        else:
            d.add(Polygon(tri, fillColor=colors.white, strokeColor=colors.black, strokeWidth=1.5))
            d.add(Line(px - 6, y - 20, px + 6, y - 8, strokeColor=colors.black, strokeWidth=1.5))
            d.add(Line(px - 6, y - 8, px + 6, y - 20, strokeColor=colors.black, strokeWidth=1.5))
            state_word = "NOT R" if state == "NOT restrained" else "R?"
        name = sk.support_labels[i] if i < len(sk.support_labels) else f"S{i + 1}"
        d.add(String(px, y - 25, f"S{i + 1} {state_word}", fontName=FONT, fontSize=fs, textAnchor="middle"))
        if sk.support_labels:
            d.add(String(px, y - 35, f"grid {name}", fontName=FONT_BOLD, fontSize=fs, textAnchor="middle"))
    for kind, x0, length in sk.elements:
        mid = x_of(x0 + length / 2)
        label = f"{'overhang' if kind == 'overhang' else 'span'} {length / 1000:.2f} m ({ft_in(length)})"
        d.add(Line(x_of(x0), y - 40, x_of(x0 + length), y - 40, strokeColor=colors.black, strokeWidth=0.5))
        d.add(String(mid, y - 50, label, fontName=FONT, fontSize=fs, textAnchor="middle"))
    legend = "▲ R restrained at bearing · △✕ NOT R not restrained · R? not seen (taken as not restrained)"
    legend2 = "■ P purlin (top-edge brace) · grey: negative moment, bottom edge in compression"
    if sk.decking:
        legend2 += " · thick top line: decking fastened"
    d.add(String(0, 11, legend, fontName=FONT, fontSize=fs))
    d.add(String(0, 1, legend2, fontName=FONT, fontSize=fs))
    return d
