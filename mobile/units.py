"""Tape-measure input: mm, m, and feet-inches (11' 9 3/4"), converted once at entry to mm."""

from __future__ import annotations

import re
from fractions import Fraction

MM_PER_INCH = 25.4
_FT_IN = re.compile(
    r"""^\s*(?:(?P<ft>\d+(?:\.\d+)?)\s*(?:'|ft))?\s*(?:(?P<in>\d+(?:\.\d+)?)?\s*"""
    r"""(?P<frac>\d+\s*/\s*\d+)?\s*(?:"|in)?)?\s*$"""
)


def parse_length_mm(text: str) -> float:
    r"""Parse '3600', '3600 mm', '3.6 m', '11\\' 9 3/4"' or '9 3/4"' to mm; ValueError names what is allowed."""
    s = text.strip().lower()
    if not s:
        raise ValueError("empty: enter a length in mm, m or feet-inches (11' 9 3/4\")")
    m = re.fullmatch(r"(\d+(?:\.\d+)?)\s*(mm|m)?", s)
    if m:
        value = float(m.group(1))
        return value * 1000 if m.group(2) == "m" else value
    if "'" in s or '"' in s or "ft" in s or "in" in s:
        f = _FT_IN.match(s)
        if f and (f.group("ft") or f.group("in") or f.group("frac")):
            inches = Fraction(f.group("ft") or 0) * 12 + Fraction(f.group("in") or 0)
            if f.group("frac"):
                inches += Fraction(f.group("frac").replace(" ", ""))
            return float(inches) * MM_PER_INCH
    raise ValueError(f"{text!r} is not a length: enter mm (3600), m (3.6 m) or feet-inches (11' 9 3/4\")")
