"""storage.fastjson gives exactly what the standard library gives, with orjson and without it.

Outside reference: Python's own ``json`` module (``json.loads``, and ``json.dumps(value,
sort_keys=True, separators=(",", ":"), ensure_ascii=False)`` for the canonical text), as documented
in the Python standard library reference; the JSON grammar is RFC 8259's. Each check compares the
helper with ``json`` on the same input: same value and type, same refusal, same text.
"""

from __future__ import annotations

import json
import math
import random
import struct
from typing import Any

import pytest

from storage import fastjson
from storage.db import connect, transaction
from storage.fastjson import LineReader, canonical, dumps_parsed, loads
from storage.oplog import Op, OpKind, ProjectionBatch, apply_op, insert_op
from tests.core.golden import beams

ODD_TEXT = [
    "",
    "\u2028 line separator \u2029 paragraph separator \u0085 next line",
    "emoji 😀 🏗️ family 👨‍👩‍👧 flag 🇨🇦",
    'quote " backslash \\ slash / tab \t newline \n return \r',
    "controls \x00 \x01 \x08 \x0b \x0c \x1f \x7f",
    "accents é ü ß — non-breaking\u00a0space, BOM \ufeff, U+FFFF \uffff",
    "digits 12345678901234567890123 and 1e-05 and 2E7 and null inside text",
    "right-to-left مرحبا שלום",
]
FLOATS = [
    0.0,
    -0.0,
    1.0,
    -1.5,
    0.1 + 0.2,
    1e-05,
    1e-4,
    0.00012,
    7.186167636047485e-05,
    1e-06,
    5e-324,
    2.2250738585072014e-308,
    1e15,
    1e16,
    1.2345678901234568e17,
    9007199254740993.0,
    1.7976931348623157e308,
    123.456,
    -0.001,
]
INTS = [0, -1, 2**53, 2**53 + 1, 2**63 - 1, 2**63, -(2**63), -(2**63) - 1, 2**64 - 1, 2**64, 10**30, -(10**30)]


def _same(a: Any, b: Any) -> bool:
    """Equal values of equal types all the way down (1 and 1.0 differ; NaN equals NaN; -0.0 is not 0.0)."""
    if type(a) is not type(b):
        return False
    if isinstance(a, dict):
        return list(a) == list(b) and all(_same(a[k], b[k]) for k in a)
    if isinstance(a, list):
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b, strict=True))
    if isinstance(a, float):
        return (math.isnan(a) and math.isnan(b)) or (a == b and math.copysign(1, a) == math.copysign(1, b))
    return bool(a == b)


def _outcome(parse: Any, text: str) -> tuple[str, Any]:
    try:
        return "value", parse(text)
    except (ValueError, RecursionError) as exc:
        return "refused", type(exc).__name__


def _nonfinite(value: Any) -> bool:
    if isinstance(value, dict):
        return any(_nonfinite(v) for v in value.values())
    if isinstance(value, list):
        return any(_nonfinite(v) for v in value)
    return isinstance(value, float) and not math.isfinite(value)


def _check_loads(text: str) -> None:
    want = _outcome(json.loads, text)
    reader = LineReader(text.encode("utf-8", "surrogatepass"))
    for parse in (loads, reader):
        got = _outcome(parse, text)
        assert got[0] == want[0], text[:80]
        if want[0] == "value":
            assert _same(got[1], want[1]), text[:80]
    if want[0] == "value" and _nonfinite(want[1]):
        assert not reader.finite, text[:80]  # dumps_parsed(..., finite=True) would write its NaN as null


@pytest.mark.parametrize(
    "text",
    [
        "NaN",
        "-Infinity",
        "Infinity",
        "[NaN, 1]",
        "1e400",
        "-1e400",
        '{"a": 1e999}',
        '"\\ud800"',
        '"\\udfff lone low"',
        '"\\ud83d\\ude00"',
        '{"a": 1, "a": 2}',
        '{"a": {"b": 1}, "a": [2]}',
        "18446744073709551616",
        "-9223372036854775809",
        "18446744073709551615",
        "123456789012345678901234567890",
        '{"n": 123456789012345678901234567890}',
        "1.0000000000000000000000001",
        '"a\x01b"',
        "\ufeff{}",
        "[1,]",
        '{"a":1,}',
        "01",
        ".5",
        "+1",
        "'a'",
        '"\\x41"',
        "tRue",
        "[" * 2000 + "]" * 2000,
        "[" * 100 + "]" * 100,
        " {} ",
        "{} x",
        "",
    ],
)
def test_loads_accepts_and_refuses_what_json_does(text):
    """NaN/Infinity, overflow, lone surrogates, duplicate keys, huge integers, bad grammar (json.loads)."""
    _check_loads(text)


def test_loads_equals_json_on_odd_text_numbers_and_records():
    values: list[Any] = [*ODD_TEXT, *FLOATS, *INTS, {"k": ODD_TEXT, "f": FLOATS, "i": INTS}]
    values += [b.model_dump(mode="json") for b in beams(200)]  # the first golden beams (tests/core/golden.py)
    for value in values:
        _check_loads(canonical(value))
        _check_loads(json.dumps(value))  # ASCII escapes and spaces, as another writer might send


def test_loads_equals_json_on_seeded_number_texts():
    rng = random.Random(7)
    for _ in range(20_000):
        digits = "".join(rng.choice("0123456789") for _ in range(rng.randint(1, 24)))
        text = (digits.lstrip("0") or "0") + rng.choice(["", ".5", f".{digits}"])
        text += rng.choice(["", f"e{rng.randint(-340, 320)}", f"E+{rng.randint(0, 30)}"])
        _check_loads(f'{{"v":{rng.choice(["", "-"])}{text}}}')


def _float_sample(n: int) -> list[float]:
    """Every kind of double: random bit patterns (all magnitudes) and decimals as people type them."""
    rng = random.Random(11)
    out = []
    while len(out) < n:
        if len(out) % 2:
            x = struct.unpack("<d", rng.getrandbits(64).to_bytes(8, "little"))[0]
        else:
            x = round(rng.uniform(-1, 1) * 10 ** rng.randint(-12, 20), rng.randint(0, 12))
        if math.isfinite(x):
            out.append(x)
    return out


def test_dumps_parsed_equals_canonical_on_floats_ints_and_odd_text():
    for value in [*FLOATS, *INTS, *ODD_TEXT, *_float_sample(50_000), math.nan, math.inf, -math.inf]:
        assert dumps_parsed(value) == canonical(value), repr(value)
        assert dumps_parsed({"v": value, "w": [value, None]}) == canonical({"v": value, "w": [value, None]})


def test_dumps_parsed_equals_canonical_on_every_character():
    text = "".join(chr(c) for c in range(0x110000) if not 0xD800 <= c <= 0xDFFF)
    for start in range(0, len(text), 4096):
        assert dumps_parsed(text[start : start + 4096]) == canonical(text[start : start + 4096])
    keys = {chr(c): c for c in (0x7F, 0xE9, 0xFFFF, 0x1F600, 0x10FFFF, 0x41, 0x2028)}  # code-point key order
    assert dumps_parsed(keys) == canonical(keys)


def test_dumps_parsed_refuses_or_falls_back_as_canonical_does():
    """Lone surrogates and non-text keys: canonical's result (the fallback), never orjson's refusal."""
    for value in ["\ud800", {"\udfff": 1}, {1: "a", 2: "b"}, {"a": (1, 2)}, OpKind.SET, {"k": OpKind.INSERT}]:
        assert dumps_parsed(value) == canonical(value)


def _op_records() -> list[dict[str, Any]]:
    """Payloads and bases of every op kind as the app writes them (set, insert, status), golden beams included."""
    rng = random.Random(5)
    return [
        *(b.model_dump(mode="json") for b in beams(300)),  # the first golden beams (tests/core/golden.py)
        {"notes": ODD_TEXT[1], "spans_mm": [7200, 3600], "top_edge": {"braced_by": "purlins", "spacing_mm": 2400}},
        {"d_mm": [1, "2"][0], "b_mm": 130, "species": "D.Fir-L"},
        {"sha256": "ab" * 32, "caption": ODD_TEXT[2], "taken_ms": 1_760_000_000_000, "site_id": "s-1"},  # photo
        {"value_mm": 12.7, "method": "tape", "beam_id": "b-1", "site_id": "s-1"},  # measurement
        {"cycle": 2, "stage": 3, "site_id": "s-1", "note": ODD_TEXT[3]},  # status
        {"d_mm": [rng.random() * 10 ** rng.randint(-8, 8) for _ in range(50)]},
        {"d_mm": [115343360000000000, 1 << 60], "notes": None},  # an hlc-sized base, an undo's null
    ]


def test_dumps_parsed_equals_canonical_on_records_of_every_op_kind():
    assert set(OpKind) == {OpKind.SET, OpKind.INSERT, OpKind.STATUS}  # each kind's payload shape is above
    for record in _op_records():
        text = canonical(record)
        reader = LineReader(text.encode())
        parsed = reader(text)
        assert dumps_parsed(parsed) == canonical(parsed)
        assert dumps_parsed(parsed, finite=reader.finite) == canonical(parsed)  # the golden beams hold nulls
        assert loads(dumps_parsed(parsed)) == parsed


def test_a_line_reader_that_read_nan_or_infinity_is_not_finite():
    reader = LineReader(b'{"a": 1}\n{"a": NaN}\n{"a": 1e999}')
    assert reader('{"a": 1}') == {"a": 1}
    assert reader.finite == (fastjson.ORJSON is not None)  # without orjson nothing is vouched for
    for text in ('{"a": NaN}', '{"a": 1e999}', '{"a": -Infinity}'):
        value = reader(text)
        assert not reader.finite
        assert dumps_parsed(value, finite=reader.finite) == canonical(value)  # NaN / Infinity, not null


def test_without_orjson_both_are_the_standard_library(monkeypatch):
    monkeypatch.setattr(fastjson, "ORJSON", None)
    assert not LineReader(b"{}").finite
    assert dumps_parsed({"b": 1e-05, "a": "\u2028"}) == '{"a":"\u2028","b":1e-05}'
    assert math.isnan(loads("NaN"))


def _merge_note(db: Any, finite: bool, note: str) -> str:
    """One edit merged through a batch told its ops are finite or not; the beam row's stored text after it."""
    op = Op(
        origin="0190aaaa-0000-7000-8000-00000000000a",
        seq=1,
        hlc=115_343_360_000_000_000,
        entity="beam",
        record_id="beam-1",
        kind="set",
        payload={"notes": note, "bridging_spacing_mm": None},
        base={},
        schema_version=1,
        wall_ms=1_760_000_000_000,
    )
    with transaction(db):
        batch = ProjectionBatch(db, finite=finite)
        batch.prefetch([op])
        assert insert_op(db, op, batch)
        apply_op(db, op, batch=batch)
        batch.flush()
    return str(db.execute("SELECT data FROM beam WHERE id='beam-1'").fetchone()[0])


@pytest.mark.parametrize("finite", [True, False])
def test_a_batch_keeps_a_stored_nan_whatever_its_ops_are(tmp_path, finite):
    """A row stored with NaN (canonical writes it) is read by json, ends the batch's ``finite`` and stays NaN."""
    db = connect(tmp_path / "t.db")
    with transaction(db):
        db.execute("INSERT INTO beam (id, site_id, data) VALUES ('beam-1', 's', ?)", [canonical({"x": math.nan})])
    text = _merge_note(db, finite, "after \u2028")
    assert text == canonical({"x": math.nan, "notes": "after \u2028", "bridging_spacing_mm": None})
    assert "NaN" in text
    assert "null" in text


def test_a_finite_batch_writes_nulls_as_canonical_does(tmp_path):
    db = connect(tmp_path / "t.db")
    with transaction(db):
        db.execute("INSERT INTO beam (id, site_id, data) VALUES ('beam-1', 's', ?)", ['{"top":{"spacing_mm":null}}'])
    text = _merge_note(db, True, "n")
    assert text == canonical({"top": {"spacing_mm": None}, "notes": "n", "bridging_spacing_mm": None})
