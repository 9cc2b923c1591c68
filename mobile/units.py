"""Lengths as a reviewer types them (mm, cm, m, feet-inches), converted once at entry to mm, and checked.

One parser serves the beam form and the CLI's JSON input. A decimal comma is a decimal point
(``3,9 m``); spans are separated by ``;`` (never by ``,``). Feet-inches accepts ``23' 7 1/2"``,
``23'-7 1/2"``, ``7-1/2"``, ``7½"`` and ``23 ft 7.5 in``. A number typed without a unit is read
in the field's unit: the unit of its plausible range (core.plausible), mm for lengths, m for the
tributary width. Every value is then held against that range; one outside it is refused with what
was understood, what is allowed and, when the same number in the other unit would fit, the question
"did you mean ... m?" (in a metre field, "did you mean ... mm?").
"""

from __future__ import annotations

import re
from fractions import Fraction
from typing import Any

from core.plausible import PLAUSIBLE, Range

MM_PER_INCH = 25.4  # the international inch, exactly
_VULGAR = {"½": " 1/2", "¼": " 1/4", "¾": " 3/4", "⅛": " 1/8", "⅜": " 3/8", "⅝": " 5/8", "⅞": " 7/8"}
_NUM = r"\d+(?:\.\d+)?|\.\d+"
_METRIC = re.compile(rf"^(?P<v>{_NUM})\s*(?P<u>mm|cm|m)?$")
_FT_IN = re.compile(
    rf"^(?:(?P<ft>{_NUM})\s*')?\s*-?\s*"
    rf"(?:(?P<inch>{_NUM})(?:(?:\s+|\s*-\s*)(?P<frac>\d+\s*/\s*\d+))?|(?P<frac_only>\d+\s*/\s*\d+))?"
    r'\s*"?$'
)
FIELD_WORDS = {
    "tributary_m": "tributary width",
    "span_mm": "span",
    "b_mm": "width b",
    "d_mm": "depth d",
    "spacing_mm": "spacing",
    "overhang_mm": "overhang",
    "bearing_length_mm": "bearing length",
    "dead_kn_m": "dead load",
    "live_kn_m": "live load",
    "snow_kn_m": "snow load",
    "dead_kpa": "dead load",
    "live_kpa": "live load",
    "snow_kpa": "snow load",
}


MM_PER = {"mm": 1.0, "m": 1000.0}  # the units a number typed bare is read in (a plausible range's unit)
_SPELLINGS = {
    "mm": "mm (3600), m (3.6 m) or feet-inches (11' 9 3/4\", 11 ft 9.75 in)",
    "m": "m (3.6), mm (3600 mm) or feet-inches (11' 9 3/4\", 11 ft 9.75 in)",
}


class LengthRefused(ValueError):
    """A length that could not be read or is implausible; ``suggestion`` is the text to offer instead."""

    def __init__(self, message: str, suggestion: str = ""):
        super().__init__(message)
        self.suggestion = suggestion


def _normalise(text: str) -> str:
    s = text.strip().lower().replace(",", ".").replace("′", "'").replace("″", '"').replace("’", "'")
    for glyph, words in _VULGAR.items():
        s = s.replace(glyph, words)
    s = re.sub(r"\s*(feet|foot|ft)\b\.?", "'", s)
    s = re.sub(r"\s*(inches|inch|in)\b\.?", '"', s)
    return s.replace("''", '"')


def parse_length(text: str, bare_unit: str = "mm") -> tuple[float, bool]:
    r"""Parse a length to (mm, unit_typed); ValueError says what is allowed.

    A number without a unit is read in ``bare_unit`` ("mm" or "m"). ``'3600'`` -> (3600, False);
    ``'3.6 m'`` -> (3600, True); ``'11\' 9 3/4"'`` -> (3599.2, True); ``'3.6'`` in "m" -> (3600, False).
    """
    if bare_unit not in MM_PER:
        msg = f"bare_unit = {bare_unit!r}; allowed: {', '.join(MM_PER)}"
        raise ValueError(msg)
    s = _normalise(text)
    if not s:
        msg = "empty: enter a length in mm, m or feet-inches (11' 9 3/4\")"
        raise LengthRefused(msg)
    m = _METRIC.fullmatch(s)
    if m:
        value, unit = float(m.group("v")), m.group("u")
        return value * {"m": 1000.0, "cm": 10.0, "mm": 1.0, None: MM_PER[bare_unit]}[unit], unit is not None
    if "'" in s or '"' in s:
        f = _FT_IN.fullmatch(s)
        if f and (f.group("ft") or f.group("inch") or f.group("frac") or f.group("frac_only")):
            inches = Fraction(f.group("ft") or 0) * 12 + Fraction(f.group("inch") or 0)
            frac = f.group("frac") or f.group("frac_only")
            if frac:
                num, den = (int(p) for p in frac.replace(" ", "").split("/"))
                if den == 0:
                    msg = f"{text!r}: a fraction of an inch cannot have 0 below the line"
                    raise LengthRefused(msg)
                inches += Fraction(num, den)
            return float(inches) * MM_PER_INCH, True
    msg = f"{text!r} is not a length: enter {_SPELLINGS[bare_unit]}"
    raise LengthRefused(msg)


def parse_length_mm(text: str) -> float:
    """Parse a length to mm (no range check); ValueError says what is allowed."""
    return parse_length(text)[0]


def _m(mm: float) -> str:
    return f"{mm / 1000:g} m" if mm >= 1000 else f"{mm:g} mm"


def _shown(mm: float, unit: str) -> str:
    """A length in mm as its field shows it: in m for a metre field, else in mm or m ('_m')."""
    return f"{mm / 1000:g} m" if unit == "m" else _m(mm)


def _range_mm(kind: str, high_mm: float | None) -> tuple[Range, float, float]:
    """The plausible range of ``kind`` and its bounds in mm (the upper one at most ``high_mm``)."""
    r: Range = PLAUSIBLE[kind]
    scale = MM_PER[r.unit]
    high = r.high * scale if high_mm is None else min(r.high * scale, high_mm)
    return r, r.low * scale, high


def allowed_text(kind: str, high_mm: float | None = None) -> str:
    """'300 mm to 40 m (common practice)'; a metre field's in m ('0.1 m to 20 m (common practice)')."""
    r, low, high = _range_mm(kind, high_mm)
    return f"{_shown(low, r.unit)} to {_shown(high, r.unit)} ({r.source})"


def check_length(kind: str, mm: float, high_mm: float | None = None, unit_typed: bool = True, typed: str = "") -> float:
    """Hold a length in mm against its plausible range; LengthRefused names what was understood and allowed.

    A number typed without a unit (``unit_typed`` False) that fits when read in the other unit (m in a mm
    field, mm in a metre field) is offered in that unit as the ``suggestion``.
    """
    r, low, high = _range_mm(kind, high_mm)
    if low <= mm <= high:
        return mm
    word = FIELD_WORDS.get(kind, kind)
    understood = (f"{mm / 1000:g} m" if r.unit == "m" else f"{mm:g} mm") + ("" if unit_typed else " (no unit typed)")
    suggestion = ""
    number = mm / MM_PER[r.unit]  # the number as typed, when typed bare
    other_unit, other_mm = ("mm", number) if r.unit == "m" else ("m", number * 1000)
    if not unit_typed and low <= other_mm <= high:
        suggestion = f"{number:g} {other_unit}"
        ask = f" Did you mean {suggestion}?"
    else:
        ask = ""
    shown = f"{typed} read as " if typed else ""
    msg = f"{word}: {shown}{understood}; allowed {allowed_text(kind, high_mm)}.{ask}"
    raise LengthRefused(msg, suggestion)


def read_length(kind: str, text: str, high_mm: float | None = None) -> float:
    """Parse and check one typed length in mm (the beam form's entry point); a bare number in the range's unit.

    LengthRefused names the field in words ('tributary width: ...').
    """
    unit = PLAUSIBLE[kind].unit
    try:
        mm, unit_typed = parse_length(text, unit)
    except LengthRefused as exc:
        msg = f"{FIELD_WORDS.get(kind, kind)}: {exc}"
        raise LengthRefused(msg) from None
    return check_length(kind, mm, high_mm, unit_typed, text.strip())


def split_spans(text: str) -> list[str]:
    """Spans typed in one field: separated by ';' (a comma is a decimal comma, never a separator)."""
    return [t for t in (p.strip() for p in text.split(";")) if t]


def feet_inches(mm: float) -> str:
    """A length in feet and inches to the nearest 1/16 in: 7200 -> 23' 7 7/16"."""
    sixteenths = round(mm / MM_PER_INCH * 16)
    feet, rest = divmod(sixteenths, 12 * 16)
    inches, frac = divmod(rest, 16)
    part = f" {Fraction(frac, 16)}" if frac else ""
    return f"{feet}' {inches}{part}\"" if feet else f'{inches}{part}"'


def echo_length(mm: float) -> str:
    """What a length was understood as, in both unit systems: 7200 -> 7200 mm = 23' 7 7/16"."""
    return f"{mm:g} mm = {feet_inches(mm)}"


def _is_number(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool)


def _length_checks(data: dict[str, Any]) -> list[tuple[str, str, Any, float | None]]:
    """(field as named to the user, plausible range, value, a further upper bound) for every length."""
    raw_spans = data.get("spans_mm")
    spans: list[Any] = raw_spans if isinstance(raw_spans, list) else []
    longest = max((s for s in spans if _is_number(s)), default=None)
    checks: list[tuple[str, str, Any, float | None]] = [
        ("b_mm", "b_mm", data.get("b_mm"), None),
        ("d_mm", "d_mm", data.get("d_mm"), None),
        ("overhang_left_mm", "overhang_mm", data.get("overhang_left_mm"), None),
        ("overhang_right_mm", "overhang_mm", data.get("overhang_right_mm"), None),
    ]
    checks += [(f"spans_mm[{i}]", "span_mm", s, None) for i, s in enumerate(spans)]
    checks += [
        (f"{edge}.spacing_mm", "spacing_mm", data[edge].get("spacing_mm"), longest)
        for edge in ("top_edge", "bottom_edge")
        if isinstance(data.get(edge), dict)
    ]
    bearings = data.get("bearings")
    if isinstance(bearings, list):
        checks += [
            (f"bearings[{i}].length_mm", "bearing_length_mm", b.get("length_mm"), None)
            for i, b in enumerate(bearings)
            if isinstance(b, dict)
        ]
    return checks


def check_beam_json(data: Any) -> None:
    """Hold the lengths of a contract-1 beam (a JSON object, in mm) against their plausible ranges.

    Raises ValueError naming the field (``spans_mm[1]``), the value and the allowed range. Values that are
    not numbers are left to the model's own validation.
    """
    if not isinstance(data, dict):
        return
    for where, kind, value, high in _length_checks(data):
        if not _is_number(value):
            continue
        r = PLAUSIBLE[kind]
        top = r.high if high is None else min(r.high, high)
        if not r.low <= value <= top:
            msg = f"{where} = {value:g} mm: outside the plausible range {allowed_text(kind, high)}"
            raise ValueError(msg)
