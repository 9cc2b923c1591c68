"""Op kind is an enum in storage; the log and bundles carry the same text as before ("set", "insert", "status")."""

import json

import pytest

from storage import Store
from storage.bundle import op_line
from storage.oplog import OP_KEYS, Op, OpKind, all_ops
from tests.core.beams import glulam


def test_kinds_are_enum_members_and_their_json_is_unchanged(tmp_path):
    s = Store(tmp_path / "k.db")
    site = s.create_site(name="Kinds")
    beam = s.save_beam(site.id, glulam())
    s.add_measurement(beam, site.id, b_mm=130)
    d = s.raise_deficiency(site.id, beam, "x", "immediate", "L", "d", "r", "a")
    s.move_status(d.id, "corrected", "c", "contractor")
    ops = all_ops(s.db)
    assert {op.kind for op in ops} == {OpKind.SET, OpKind.INSERT, OpKind.STATUS}
    assert all(isinstance(op.kind, OpKind) for op in ops)
    stored = {r[0] for r in s.db.execute("SELECT DISTINCT kind FROM op")}
    assert stored == {"set", "insert", "status"}
    rows = s.db.execute(f"SELECT {', '.join(OP_KEYS)} FROM op").fetchall()
    assert {json.loads(op_line(r))["kind"] for r in rows} == {"set", "insert", "status"}


@pytest.mark.parametrize("kind", ["delete", "SET", ""])
def test_unknown_kind_is_refused_naming_it(kind):
    row = {
        "origin": "o",
        "seq": 1,
        "hlc": 1,
        "entity": "site",
        "record_id": "r",
        "kind": kind or "x",
        "payload": {},
        "base": {},
        "schema_version": 1,
        "wall_ms": 1,
    }
    with pytest.raises(ValueError, match=f"unknown op kind '{kind or 'x'}'; allowed: set, insert, status"):
        Op.from_row(row)
