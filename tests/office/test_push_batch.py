"""The hub's push merges through one prefetched batch: ops added earlier in the same push count as held.

Reference: the same signed ops pushed one per push (each its own transaction and batch) into a second hub of
the same backend; the op log, hub log, stamps, conflicts, projections and quarantine reasons must be equal.
"""

import time

import pytest

from office.hubstore import HubStore
from storage import identity
from storage.clock import uuid7
from storage.oplog import Op
from tests.office.conftest import make_hub

TABLES = {"op": "1, 2", "field_stamp": "1, 2, 3", "seen": "1", "beam": "1", "hub_log": "1"}  # table: ORDER BY


def _device(hub: HubStore, name: str, key):
    device_id = str(uuid7())
    hub.enroll(hub.new_code(name, "A. Reviewer", "reviewer"), device_id, identity.public_text(key))
    return device_id


def _state(hub: HubStore) -> dict:
    out = {
        t: [tuple(r) for r in hub.db.execute(f"SELECT * FROM {t} ORDER BY {o}").fetchall()] for t, o in TABLES.items()
    }
    out["conflict"] = [
        tuple(r)
        for r in hub.db.execute(
            "SELECT entity, record_id, field, winner_origin, winner_seq, winner_value, loser_origin, loser_seq, "
            "loser_value FROM conflict ORDER BY id"
        ).fetchall()
    ]
    out["quarantine"] = [
        tuple(r) for r in hub.db.execute("SELECT origin, seq, reason FROM hub_quarantine ORDER BY 1, 2")
    ]
    return out


@pytest.mark.parametrize("backend", ["sqlite", "postgresql"])
def test_one_push_sees_its_own_ops_as_one_op_per_push_would(request, tmp_path, backend):
    keys = [identity.new_private_key(), identity.new_private_key()]
    hubs = [make_hub(request, backend, tmp_path / name) for name in ("batched", "single")]
    now = (int(time.time() * 1000) - 60_000) << 16
    try:
        ids = [_device(hubs[0], "A", keys[0]), _device(hubs[0], "B", keys[1])]
        for n, key in enumerate(keys):  # the same device ids on both hubs: the same ops and signatures
            hubs[1].enroll(hubs[1].new_code("AB"[n], "A. Reviewer", "reviewer"), ids[n], identity.public_text(key))
        a, b = ids
        ops = [
            Op(a, 1, now + 1, "beam", "b1", "set", {"notes": "first", "level": "Roof"}, {}, 1, now >> 16),
            Op(a, 2, now + 2, "beam", "b1", "set", {"notes": "second"}, {"notes": [now + 1, a]}, 1, now >> 16),
            Op(b, 1, now + 3, "beam", "b1", "set", {"notes": "concurrent"}, {}, 1, now >> 16),  # conflict with a:2
            Op(a, 1, now + 1, "beam", "b1", "set", {"notes": "first", "level": "Roof"}, {}, 1, now >> 16),  # again
            Op(a, 2, now + 9, "beam", "b1", "set", {"notes": "forged"}, {}, 1, now >> 16),  # same seq, other content
            Op(a, 4, now + 4, "beam", "b2", "set", {"notes": "ahead of a hole"}, {}, 1, now >> 16),
            Op(a, 3, now + 5, "beam", "b2", "set", {"level": "L2"}, {}, 1, now >> 16),  # closes the run to 4
        ]
        signed = [(op, identity.sign_op(keys[0 if op.origin == a else 1], op)) for op in ops]
        answer = hubs[0].push(a, "push-all", "0" * 64, signed)
        for n, item in enumerate(signed):
            hubs[1].push(a, f"push-{n}", "0" * 64, [item])
        batched, single = _state(hubs[0]), _state(hubs[1])
        assert batched == single
        assert [r[2].split(":")[0] for r in batched["quarantine"]] == ["integrity"]
        assert batched["conflict"]
        assert batched["conflict"][0][3:5] == (b, 1)  # the winner; the loser is a:2
        assert batched["conflict"][0][6:8] == (a, 2)
        assert dict(batched["seen"]) == {a: 4, b: 1}
        assert answer.accepted == {a: 4, b: 1}
    finally:
        for hub in hubs:
            hub.close()
