"""Beam sketch (reportlab graphics): spans to scale, supports, braces, negative regions, restraint.

Status is shown by shape and words as well as colour, so it reads in black and white: a restrained
bearing is a solid triangle with "R"; an unrestrained one a hollow triangle with a cross and "NOT R".
"""

from __future__ import annotations

from reportlab.graphics.shapes import Drawing, Line, Polygon, Rect, String
from reportlab.lib import colors

from reports.content import Sketch

FONT = "BWSans"


def beam_sketch(sk: Sketch, width_pt: float = 460, height_pt: float = 92) -> Drawing:
    """A drawing of the beam for one notice item."""
    d = Drawing(width_pt, height_pt)
    total = sum(length for _, _, length in sk.elements) or 1.0
    margin = 18.0
    scale = (width_pt - 2 * margin) / total
    y = height_pt * 0.55
    depth = 10.0

    def x_of(mm: float) -> float:
        return margin + mm * scale

    for x0, x1 in sk.negative:
        d.add(
            Rect(
                x_of(x0),
                y - 2,
                (x1 - x0) * scale,
                depth + 4,
                fillColor=colors.Color(0.85, 0.85, 0.85),
                strokeColor=None,
            )
        )
    d.add(Rect(x_of(0), y, total * scale, depth, fillColor=None, strokeColor=colors.black, strokeWidth=1.2))
    if sk.decking:
        d.add(Line(x_of(0), y + depth + 3, x_of(total), y + depth + 3, strokeColor=colors.black, strokeWidth=2))
        d.add(String(x_of(0), y + depth + 6, "decking fastened (top edge)", fontName=FONT, fontSize=6.5))
    for bx in sk.braces_top_x:
        d.add(Rect(x_of(bx) - 2.5, y + depth, 5, 5, fillColor=colors.black, strokeColor=colors.black))
    if sk.braces_top_x:
        d.add(String(x_of(0), y + depth + 8, "■ purlin / top-edge brace", fontName=FONT, fontSize=6.5))
    for bx in sk.braces_bottom_x:
        d.add(Polygon([x_of(bx) - 3, y - 5, x_of(bx) + 3, y - 5, x_of(bx), y], fillColor=colors.black))
    for i, (sx, state) in enumerate(zip(sk.supports_x, sk.restrained, strict=True)):
        px = x_of(sx)
        tri = [px - 7, y - 14, px + 7, y - 14, px, y]
        if state == "restrained":
            d.add(Polygon(tri, fillColor=colors.black, strokeColor=colors.black))
            label = f"S{i + 1} R"
        else:
            d.add(Polygon(tri, fillColor=colors.white, strokeColor=colors.red, strokeWidth=1.5))
            d.add(Line(px - 6, y - 20, px + 6, y - 8, strokeColor=colors.red, strokeWidth=1.5))
            d.add(Line(px - 6, y - 8, px + 6, y - 20, strokeColor=colors.red, strokeWidth=1.5))
            label = f"S{i + 1} NOT R" if state == "NOT restrained" else f"S{i + 1} R?"
        d.add(String(px, y - 26, label, fontName=FONT, fontSize=7, textAnchor="middle"))
    for kind, x0, length in sk.elements:
        mid = x_of(x0 + length / 2)
        d.add(
            String(
                mid,
                y - 38,
                f"{'overhang' if kind == 'overhang' else 'span'} {length / 1000:.2f} m",
                fontName=FONT,
                fontSize=7,
                textAnchor="middle",
            )
        )
    legend = "R = restrained at bearing; NOT R = restraint missing; grey = negative moment (bottom edge in compression)"
    d.add(String(width_pt - margin, height_pt - 7, legend, fontName=FONT, fontSize=6, textAnchor="end"))
    return d
