"""Sync at scale: export lines straight from the stored canonical text; a large export splits into parts."""

import json
import random

import pytest

from storage import Store
from storage.bundle import export_bundles, import_bundles, op_line, part_path
from storage.clock import uuid7
from storage.db import connect, transaction
from storage.oplog import OP_KEYS, Op, ProjectionBatch, apply_op, canonical, insert_op
from storage.validate import MAX_VALUE_CHARS, RecordInvalid, check_op_record

KEY = "test-firm-key"


def _fill(store, n):
    site = store.create_site(name="Big site")
    with transaction(store.db):
        for i in range(n - 1):
            store._save_in_tx("beam", uuid7(), {"mark": f"B-{i}", "site_id": site.id, "note": "café ☃"}, "set", None)
    return site


def test_export_line_from_stored_text_equals_canonical_op(tmp_path):
    store = Store(tmp_path / "a.db", firm_key=KEY)
    _fill(store, 20)
    store.save("site", store.sites()[0].id, {"address": 'quote " and \\ backslash'})
    for row in store.db.execute(f"SELECT {', '.join(OP_KEYS)} FROM op"):
        op = dict(zip(OP_KEYS, row, strict=True))
        op["payload"], op["base"] = json.loads(op["payload"]), json.loads(op["base"])
        assert op_line(row) == canonical(op)


def test_20k_ops_split_into_parts_that_import_in_order(tmp_path):
    a = Store(tmp_path / "a.db", firm_key=KEY)
    _fill(a, 20_000)
    manifests = export_bundles(a, tmp_path / "all.zip", part_ops=6_000)
    assert [m["op_count"] for m in manifests] == [6_000, 6_000, 6_000, 2_000]
    paths = [part_path(tmp_path / "all.zip", n) for n in range(1, 5)]
    assert [p.name for p in paths] == ["all.zip", "all-2.zip", "all-3.zip", "all-4.zip"]
    b = Store(tmp_path / "b.db", firm_key=KEY)
    # out of order, a later part is refused (a gap), and nothing is written
    assert import_bundles(b, [paths[1]])[0].outcome == "refused"
    reports = import_bundles(b, paths)
    assert [r.outcome for r in reports] == ["applied"] * 4
    assert sum(r.ops_new for r in reports) == 20_000
    assert b.digest() == a.digest()


# -- the batched merge (an import) against the same ops merged one at a time (a local save's path) --------------

ORIGINS = ("0190aaaa-0000-7000-8000-00000000000a", "0190aaaa-0000-7000-8000-00000000000b", "0190aaaa-0000-7000-8000-0c")
FIELDS = ("notes", "d_mm", "b_mm", "spans_mm", "level")


def _random_ops(seed, n):
    """Edits, inserts and status moves from three devices on a few records, with stale and fresh bases."""
    rng = random.Random(seed)
    seqs = dict.fromkeys(ORIGINS, 0)
    stamps = {}  # (record, field) -> the last stamp an op gave it: a base a device may or may not have seen
    ops = []
    for _ in range(n):
        origin = rng.choice(ORIGINS)
        seqs[origin] += 1
        hlc = (1_760_000_000_000 + rng.randrange(0, 50)) << 16 | rng.randrange(0, 4)
        record = f"beam-{rng.randrange(6)}"
        common = {"origin": origin, "seq": seqs[origin], "hlc": hlc, "schema_version": 1, "wall_ms": hlc >> 16}
        roll = rng.random()
        if roll < 0.75:
            fields = rng.sample(FIELDS, rng.randint(1, 3))
            payload = {
                f: rng.choice((rng.randrange(100, 900), f"v{rng.randrange(9)}", [7200, 3600], None)) for f in fields
            }
            base = {f: list(stamps[(record, f)]) for f in fields if (record, f) in stamps and rng.random() < 0.6}
            ops.append(Op(entity="beam", record_id=record, kind="set", payload=payload, base=base, **common))
            stamps.update({(record, f): (hlc, origin) for f in fields})
        elif roll < 0.9:
            payload = {"cycle": rng.randrange(3), "stage": rng.randrange(4), "site_id": "s1"}
            ops.append(
                Op(
                    entity="deficiency",
                    record_id=f"def-{rng.randrange(3)}",
                    kind="status",
                    payload=payload,
                    base={},
                    **common,
                )
            )
        else:
            rid = f"m-{rng.randrange(1000)}"
            payload = {"site_id": "s1", "beam_id": record, "value_mm": 5}
            ops.append(Op(entity="measurement", record_id=rid, kind="insert", payload=payload, base={}, **common))
    ops = [op for op in ops if not (op.kind == "insert" and sum(o.record_id == op.record_id for o in ops) > 1)]
    return ops


def _state(db):
    tables = ("site", "visit", "beam", "deficiency", "measurement", "deficiency_event", "field_stamp", "seen", "op")
    out = {t: db.execute(f"SELECT * FROM {t} ORDER BY 1, 2").fetchall() for t in tables}
    out["conflict"] = db.execute(
        "SELECT entity, record_id, field, winner_origin, winner_seq, winner_value, loser_origin, loser_seq, "
        "loser_value FROM conflict ORDER BY id"
    ).fetchall()
    return out


def merge_one_at_a_time(db, ops):
    with transaction(db):
        for op in ops:
            if insert_op(db, op):
                apply_op(db, op)


def merge_batched(db, ops, batch_ops):
    """Merge ``ops`` in transactions of ``batch_ops``, one ProjectionBatch renewed across them (as an import does)."""
    batch = None
    for start in range(0, len(ops), batch_ops):
        chunk = ops[start : start + batch_ops]
        with transaction(db):
            if batch is None:
                batch = ProjectionBatch(db)
            else:
                batch.renew()
            batch.prefetch(chunk)
            for op in chunk:
                if insert_op(db, op, batch):
                    apply_op(db, op, batch=batch)
            batch.flush()


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize("batch_ops", [1, 7, 64, 10_000])
def test_batched_merge_equals_merging_one_op_at_a_time(tmp_path, seed, batch_ops):
    """Reference: the same ops through insert_op + apply_op with no batch (each read and write straight to SQL)."""
    ops = _random_ops(seed, 300)
    one = connect(tmp_path / "one.db")
    merge_one_at_a_time(one, ops)
    many = connect(tmp_path / "many.db")
    for start in range(0, len(ops), batch_ops):
        chunk = ops[start : start + batch_ops]
        with transaction(many):
            batch = ProjectionBatch(many)
            if seed % 2 == 0:
                batch.prefetch(chunk)  # with and without the up-front read: the same state
            for op in chunk + chunk[:3]:  # ops already held (in this batch) are skipped as before
                if insert_op(many, op, batch):
                    apply_op(many, op, batch=batch)
            batch.flush()
    state = _state(one)
    assert state["conflict"], "the ops make concurrent edits"
    assert _state(many) == state


def test_prefetch_reads_every_chunk_of_ids(tmp_path):
    """More records and stamps than one IN list holds (IN_CHUNK), read up front, equal what is stored."""
    db = connect(tmp_path / "a.db")
    ops = [
        Op(ORIGINS[0], i + 1, (1_760_000_000_000 + i) << 16, "beam", f"b{i:04d}", "set", {"notes": str(i)}, {}, 1, 1)
        for i in range(700)
    ]
    with transaction(db):
        for op in ops[::2]:
            insert_op(db, op)
            apply_op(db, op)
    batch = ProjectionBatch(db)
    batch.prefetch(ops)
    for op in ops:
        stored = db.execute("SELECT hlc, origin FROM field_stamp WHERE record_id=?", [op.record_id]).fetchone()
        assert batch.stamps[("beam", op.record_id, "notes")] == (tuple(stored) if stored else None)
        assert batch.rows[("beam", op.record_id)][0] == ({"notes": op.payload["notes"]} if stored else None)
        assert (batch.held[(op.origin, op.seq)] is not None) == (stored is not None)


def _note_op(payload):
    return Op(ORIGINS[0], 1, 1 << 16, "beam", "b1", "set", payload, {}, 1, 1)


def test_value_size_limit_holds_at_its_boundary():
    """A field's canonical JSON of MAX_VALUE_CHARS passes, one more is refused, also beside other fields."""
    at_limit = "x" * (MAX_VALUE_CHARS - 2)  # the two quotes make it MAX_VALUE_CHARS
    check_op_record(_note_op({"notes": at_limit}))
    check_op_record(_note_op({"notes": at_limit, "level": at_limit}))  # the payload is long, each field is not
    with pytest.raises(RecordInvalid, match=r"'notes'.*longer than"):
        check_op_record(_note_op({"notes": at_limit + "x", "level": "Roof"}))
    status = Op(
        ORIGINS[0], 1, 1 << 16, "deficiency", "d1", "status", {"cycle": 0, "stage": 1, "note": at_limit + "x"}, {}, 1, 1
    )
    with pytest.raises(RecordInvalid):
        check_op_record(status)


@pytest.mark.parametrize("value", [{"b": 1, "a": [1.5, None, True]}, 'café ☃ \u2028 "q"', [], {}, 1e300, -0.0])
def test_canonical_is_sorted_compact_json(value):
    """Python's json module with sorted keys, no spaces, non-ASCII kept (the stored and hashed form)."""
    assert canonical(value) == json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False)


@pytest.mark.parametrize("seed", range(4))
@pytest.mark.parametrize("batch_ops", [5, 64])
def test_one_batch_renewed_across_transactions_equals_one_at_a_time(tmp_path, seed, batch_ops):
    """An import's batch carried through its transactions (``renew``) equals the op-at-a-time path.

    Ops arrive out of seq order, with gaps that close later: the log, the high-water marks, the conflicts (a
    winner's seq found among ops added but not yet written) and every projection equal the op-at-a-time path's
    (reference: insert_op + apply_op with no batch).
    """
    ops = _random_ops(seed, 300)
    rng = random.Random(seed)
    for start in range(0, len(ops), 40):  # shuffle within windows: seqs arrive out of order, runs close later
        window = ops[start : start + 40]
        rng.shuffle(window)
        ops[start : start + 40] = window
    one = connect(tmp_path / "one.db")
    merge_one_at_a_time(one, ops)
    many = connect(tmp_path / "many.db")
    merge_batched(many, ops, batch_ops)
    state = _state(one)
    assert state["conflict"], "the ops make concurrent edits"
    assert _state(many) == state


def test_renew_drops_what_it_read_when_another_connection_committed(tmp_path):
    """A save by another connection between two transactions of a merge is seen by the next one.

    SQLite's data_version changed: the batch reads the row and stamp again, so the save is neither lost nor
    overwritten.
    """
    path = tmp_path / "a.db"
    db = connect(path)
    first = Op(ORIGINS[0], 1, 10 << 16, "beam", "b1", "set", {"notes": "one", "level": "L1"}, {}, 1, 1)
    late = Op(ORIGINS[0], 2, 12 << 16, "beam", "b1", "set", {"level": "L3"}, {}, 1, 1)
    other = Op(ORIGINS[1], 1, 20 << 16, "beam", "b1", "set", {"notes": "saved meanwhile"}, {}, 1, 1)
    with transaction(db):
        batch = ProjectionBatch(db)
        batch.prefetch([first])
        insert_op(db, first, batch)
        apply_op(db, first, batch=batch)
        batch.flush()
    merge_one_at_a_time(connect(path), [other])  # another connection commits
    with transaction(db):
        batch.renew()
        assert batch.rows == {}
        assert batch.stamps == {}
        insert_op(db, late, batch)
        apply_op(db, late, batch=batch)
        batch.flush()
    data = json.loads(db.execute("SELECT data FROM beam WHERE id='b1'").fetchone()[0])
    assert data == {"notes": "saved meanwhile", "level": "L3"}
    with transaction(db):  # nobody else committed: what the batch read stays
        batch.renew()
        assert batch.rows[("beam", "b1")][0] == data
        batch.flush()


def test_renew_refuses_an_unflushed_batch(tmp_path):
    db = connect(tmp_path / "a.db")
    op = Op(ORIGINS[0], 1, 10 << 16, "beam", "b1", "set", {"notes": "one"}, {}, 1, 1)
    with transaction(db):
        batch = ProjectionBatch(db)
        insert_op(db, op, batch)
        apply_op(db, op, batch=batch)
        with pytest.raises(RuntimeError, match="flush"):
            batch.renew()
        batch.flush()
