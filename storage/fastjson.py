"""JSON for the import path: the compiled ``orjson`` where it gives exactly the standard library's result.

Import decodes every op line and every projection row it touches and encodes every op's payload and
base and every row it changes; with the standard library those were a third of an import. ``orjson``
(a compiled parser and encoder, wheels on PyPI) does the same work several times faster, but it does
not agree with ``json`` on everything, so each function here uses it only where it was shown to agree
(tests/storage/test_fastjson.py) and falls back to ``json`` otherwise:

- ``loads``: ``orjson`` refuses what ``json.loads`` accepts beyond the JSON grammar (``NaN``,
  ``Infinity``, numbers that overflow to infinity, escaped lone surrogates) and reads integers past
  64 bits as floats. A text ``orjson`` refuses, or one with a run of 19 or more digits (every such
  integer has one), is read by ``json.loads`` instead: the same values, and the same refusals.
- ``dumps_parsed``: ``orjson`` writes NaN and infinities as ``null``, floats below 1e-4 in fixed
  notation (``0.00001``) and negative exponents without the zero (``1e-6``), and refuses integers past
  64 bits and lone surrogates. An output holding ``null``, ``0.0000`` or a digit followed by ``e``/``E``,
  or a value ``orjson`` refuses, is encoded by ``canonical`` instead: the same text. Only for values that
  came from parsing JSON (dicts, lists, str, int, float, bool, None): ``orjson`` also writes types
  ``json`` refuses (UUIDs, enums), which such values never hold.

Without ``orjson`` (a tablet build may lack it) both are the standard library's. Tests run the sync
suites both ways (``ORJSON`` set to None).
"""

from __future__ import annotations

import json
from typing import Any

try:
    import orjson as _orjson_module
except ImportError:  # pragma: no cover - exercised by the tests with ORJSON set to None
    _orjson_module = None  # type: ignore[assignment]

ORJSON: Any = _orjson_module  # None: the standard library only (tests switch it off here)
# every digit read as 0 and E as e, so one substring search finds a run of digits or a digit before an exponent
_DIGITS = bytes.maketrans(b"123456789E", b"000000000e")
_LONG_RUN = b"0" * 19  # an integer that may not fit 64 bits (orjson reads it as a float) has 19 digits or more

# what json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False) builds on every call
_CANONICAL = json.JSONEncoder(sort_keys=True, separators=(",", ":"), ensure_ascii=False)


def canonical(value: Any) -> str:
    """Canonical JSON (sorted keys, no spaces) used for hashes and stored values."""
    return _CANONICAL.encode(value)


def has_long_digits(data: bytes) -> bool:
    """Whether ``data`` holds a run of 19 or more digits (where ``orjson`` may read an integer as a float)."""
    return _LONG_RUN in data.translate(_DIGITS)


def loads(text: str) -> Any:
    """``json.loads(text)``: the same value, or the same refusal (``ValueError`` or ``RecursionError``)."""
    if ORJSON is None or not isinstance(text, str) or has_long_digits(text.encode("utf-8", "surrogatepass")):
        return json.loads(text)
    return _orjson_or_json(text)


def loads_finite(text: str) -> tuple[Any, bool]:
    """``loads(text)``, and whether orjson read it (then the value holds no NaN or infinity: it refuses them)."""
    if ORJSON is None or has_long_digits(text.encode("utf-8", "surrogatepass")):
        return json.loads(text), False
    try:
        return ORJSON.loads(text), True
    except ORJSON.JSONDecodeError:
        return json.loads(text), False


class LineReader:
    """``loads`` for the lines of one body, checking the whole of it for long digit runs once instead of per line.

    ``finite`` stays True while every line was read by orjson, which refuses NaN, Infinity and numbers
    that overflow: the values read then hold no non-finite float, and ``dumps_parsed(..., finite=True)``
    may keep orjson's ``null`` (a JSON null, not a NaN).
    """

    def __init__(self, body: bytes):
        """Decide once for the body whether orjson may read its lines."""
        self.fast = ORJSON is not None and not has_long_digits(body)
        self.finite = self.fast

    def __call__(self, text: str) -> Any:
        """``json.loads(text)``'s value or refusal."""
        if not self.fast:
            return loads(text)
        try:
            return ORJSON.loads(text)
        except ORJSON.JSONDecodeError:
            self.finite = False  # json may accept it (NaN, Infinity, overflow, lone surrogates)
            return json.loads(text)


def _orjson_or_json(text: str) -> Any:
    """``orjson.loads``, or ``json.loads`` where orjson refuses (json may accept: NaN, lone surrogates)."""
    try:
        return ORJSON.loads(text)
    except ORJSON.JSONDecodeError:
        return json.loads(text)


def dumps_parsed(value: Any, finite: bool = False) -> str:
    """``canonical(value)`` (sorted keys, no spaces, text unescaped) for a value parsed from JSON.

    ``finite``: the caller knows the value holds no NaN or infinity (read by a ``LineReader`` whose
    ``finite`` stayed True); a ``null`` in orjson's text is then a JSON null. Otherwise a text with
    ``null`` is encoded by ``canonical`` (orjson writes NaN and infinities as ``null``).
    """
    fast = ORJSON
    if fast is None:
        return canonical(value)
    try:
        out: bytes = fast.dumps(value, option=_OPTIONS)
    except TypeError:  # orjson.JSONEncodeError is a TypeError: big integers, lone surrogates, other types
        return canonical(value)
    if (not finite and b"null" in out) or b"0.0000" in out or b"0e" in out.translate(_DIGITS):
        return canonical(value)  # NaN or infinity (written null), a float below 1e-4, or an exponent
    return out.decode()


# sorted keys; str, int, dict and list subclasses and dataclasses are refused (then ``canonical`` decides)
_OPTIONS = (
    0 if ORJSON is None else ORJSON.OPT_SORT_KEYS | ORJSON.OPT_PASSTHROUGH_SUBCLASS | ORJSON.OPT_PASSTHROUGH_DATACLASS
)
