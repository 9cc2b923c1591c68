"""``Op.from_row``'s one-expression check refuses and accepts exactly what its per-field checks do.

Outside reference: none needed beyond the checks themselves (``_check_row_types`` and
``Op.validate``, the ranges in ``storage.oplog.INT_RANGES``): each row below, valid or broken in one
field, is built once with the expression and once with the expression forced off, and both must give
the same op or the same refusal message.
"""

from __future__ import annotations

import enum
from typing import Any

import pytest

import storage.oplog as oplog
from storage.clock import HLC_MAX
from storage.oplog import MAX_ID_CHARS, SEQ_MAX, WALL_MS_MAX, Op


class _Seq(enum.IntEnum):
    ONE = 1


GOOD = {
    "origin": "0190aaaa-0000-7000-8000-00000000b001",
    "seq": 7,
    "hlc": 115_343_360_000_000_000,
    "entity": "beam",
    "record_id": "beam-1",
    "kind": "set",
    "payload": {"d_mm": 456},
    "base": {},
    "schema_version": 1,
    "wall_ms": 1_760_000_000_000,
}
BROKEN: list[dict[str, Any]] = [
    {},
    {"origin": ""},
    {"origin": "x" * MAX_ID_CHARS},
    {"origin": "x" * (MAX_ID_CHARS + 1)},
    {"origin": 5},
    {"record_id": None},
    {"entity": "nope"},
    {"entity": "measurement"},
    {"kind": "insert", "entity": "photo"},
    {"kind": "insert", "entity": "beam"},
    {"kind": "status", "entity": "deficiency", "payload": {"cycle": 1, "stage": 1}},
    {"kind": "status", "entity": "beam"},
    {"kind": "SET"},
    {"kind": "x" * (MAX_ID_CHARS + 1)},
    {"seq": 0},
    {"seq": 1},
    {"seq": SEQ_MAX},
    {"seq": SEQ_MAX + 1},
    {"seq": True},
    {"seq": 7.0},
    {"seq": _Seq.ONE},
    {"seq": "7"},
    {"hlc": -1},
    {"hlc": HLC_MAX},
    {"hlc": HLC_MAX + 1},
    {"schema_version": 0},
    {"schema_version": 10_000},
    {"schema_version": 10_001},
    {"wall_ms": WALL_MS_MAX},
    {"wall_ms": WALL_MS_MAX + 1},
    {"wall_ms": -1},
    {"payload": []},
    {"base": "{}"},
    {"payload": '{"d_mm": 456}'},
]


def _outcome(row: dict[str, Any]) -> tuple[str, Any]:
    try:
        op = Op.from_row(dict(row))
    except (ValueError, TypeError) as exc:  # TypeError: json.loads given a list (as before)
        return "refused", f"{type(exc).__name__}: {exc}"
    return "op", (op, type(op.seq), op.kind)


@pytest.mark.parametrize("change", BROKEN)
def test_one_expression_check_equals_the_per_field_checks(change, monkeypatch):
    row = {**GOOD, **change}
    fast = _outcome(row)
    monkeypatch.setattr(oplog, "_plainly_valid", lambda _row: False)
    assert fast == _outcome(row)
