"""Plausible ranges of what a reviewer measures on site (pure data; the UI and the CLI's JSON input use them).

These are not limits of the standard: they catch a value typed in the wrong unit (a span of
3.9 mm, purlins at 2.4 mm) before it is rechecked. A value outside its range is refused with a
message naming the field, what was understood and what is allowed. Sources, per row:
- spans 0.3 m to 40 m: common practice (straight glulam beams in buildings stay well under 40 m;
  below 0.3 m is a block, not a beam).
- b 25 mm to 365 mm: common practice (25 mm boards; 365 mm is the widest stock glulam width in
  Canada, from memory of the manufacturers' size tables).
- d 38 mm to 2128 mm: common practice (38 mm dressed 2x; 2128 mm = 56 laminations of 38 mm,
  the deepest stock glulam, from memory).
- top / bottom bracing spacing 100 mm to the longest span: common practice (closer than 100 mm is
  decking, which is its own choice; farther than the span braces nothing).
- overhang 0 to 15 m, bearing length 25 mm to 1000 mm, tributary width 0.1 m to 20 m: common
  practice (wider than these is a different structure or a unit slip).
- line loads 0 to 200 kN/m per load type: common practice for timber beams (a heavier line load
  is a transfer girder outside this app's scope).
"""

from __future__ import annotations

from typing import NamedTuple


class Range(NamedTuple):
    """Closed interval [low, high] in ``unit``, and where it comes from."""

    low: float
    high: float
    unit: str
    source: str


PLAUSIBLE: dict[str, Range] = {
    "span_mm": Range(300.0, 40_000.0, "mm", "common practice"),
    "b_mm": Range(25.0, 365.0, "mm", "common practice; widest stock glulam from memory"),
    "d_mm": Range(38.0, 2_128.0, "mm", "common practice; 56 x 38 mm laminations from memory"),
    "spacing_mm": Range(100.0, 40_000.0, "mm", "common practice; also at most the longest span"),
    "overhang_mm": Range(0.0, 15_000.0, "mm", "common practice"),
    "bearing_length_mm": Range(25.0, 1_000.0, "mm", "common practice"),
    "tributary_m": Range(0.1, 20.0, "m", "common practice"),
    "line_load_kn_m": Range(0.0, 200.0, "kN/m", "common practice"),
}
