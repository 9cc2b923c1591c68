"""A batch's writes (ProjectionBatch: rows as INSERT or UPDATE, stamps read by record) equal the op-at-a-time path.

Reference: the same ops through insert_op + apply_op with no batch (each read and write straight to SQL, the
upsert of ``_store``), as in test_sync_scale.py. Here the ops also move records between sites (the ``site_id``
column and its index, the stored results' site), start from rows and stamps already held, and meet a record that
holds field stamps but no row.
"""

import random

import pytest

from storage.db import connect, transaction
from storage.oplog import Op
from tests.storage.test_sync_scale import merge_batched, merge_one_at_a_time

ORIGINS = ("0190aaaa-0000-7000-8000-00000000000a", "0190aaaa-0000-7000-8000-00000000000b")
SITES = ("s1", "s2", None)


def _ops(seed: int, n: int, first_seq: dict[str, int]) -> list[Op]:
    rng = random.Random(seed)
    seqs = dict(first_seq)
    ops = []
    for _ in range(n):
        origin = rng.choice(ORIGINS)
        seqs[origin] += 1
        hlc = (1_760_000_000_000 + rng.randrange(0, 80)) << 16 | rng.randrange(0, 4)
        fields = rng.sample(("site_id", "notes", "d_mm", "level"), rng.randint(1, 3))
        values = {"site_id": rng.choice(SITES), "notes": f"n{rng.randrange(5)}", "d_mm": rng.randrange(100, 900)}
        payload = {f: values.get(f, f"L{rng.randrange(3)}") for f in fields}
        common = {"origin": origin, "seq": seqs[origin], "hlc": hlc, "schema_version": 1, "wall_ms": hlc >> 16}
        record = f"beam-{rng.randrange(8)}"
        ops.append(Op(entity="beam", record_id=record, kind="set", payload=payload, base={}, **common))
    return ops


def _state(db):
    tables = ("beam", "field_stamp", "seen", "op", "beam_result")
    out = {t: db.execute(f"SELECT * FROM {t} ORDER BY 1, 2").fetchall() for t in tables}
    out["by_site"] = db.execute("SELECT site_id, id FROM beam INDEXED BY beam_site ORDER BY site_id, id").fetchall()
    out["conflict"] = db.execute(
        "SELECT entity, record_id, field, winner_origin, winner_seq, winner_value, loser_origin, loser_seq, "
        "loser_value FROM conflict ORDER BY id"
    ).fetchall()
    return out


@pytest.mark.parametrize("seed", range(4))
@pytest.mark.parametrize("batch_ops", [3, 50, 1_000])
def test_rows_moving_between_sites_equal_the_upsert_path(tmp_path, seed, batch_ops):
    """Held rows and new ones, site_id set, changed, kept and cleared: the same rows, index, results and stamps."""
    held = _ops(seed + 100, 40, dict.fromkeys(ORIGINS, 0))  # rows and stamps already held before the batches
    ops = _ops(seed, 300, {o: max(op.seq for op in held if op.origin == o) for o in ORIGINS})
    one, many = connect(tmp_path / "one.db"), connect(tmp_path / "many.db")
    for db in (one, many):
        merge_one_at_a_time(db, held[:20])
        with transaction(db):  # stored results of some beams: the triggers mark them and move their site
            for n in range(0, 8, 2):
                db.execute("UPDATE beam_result SET input_hash = 'h', site_id = 'old' WHERE beam_id = ?", [f"beam-{n}"])
    merge_one_at_a_time(one, held[20:] + ops)
    merge_one_at_a_time(many, held[20:])
    merge_batched(many, ops, batch_ops)
    state = _state(one)
    assert {op.payload["site_id"] for op in ops if "site_id" in op.payload} == set(SITES), "moves to each site"
    assert _state(many) == state


def test_a_record_with_stamps_but_no_row_is_read_field_by_field(tmp_path):
    """Fields stamped without a row (not written by this app, but possible in a copied database) keep their stamps.

    The batch reads stamps by record only for records with no stamp at all; here the held stamp is newer than
    the incoming op's, so the op loses that field, as it does op at a time.
    """
    one, many = connect(tmp_path / "one.db"), connect(tmp_path / "many.db")
    newer = (1_800_000_000_000 << 16, ORIGINS[1])
    for db in (one, many):
        with transaction(db):
            db.execute("INSERT INTO field_stamp VALUES ('beam', 'b1', 'notes', ?, ?)", list(newer))
    op = Op(ORIGINS[0], 1, 1_760_000_000_000 << 16, "beam", "b1", "set", {"notes": "old", "level": "L1"}, {}, 1, 1)
    fresh = Op(ORIGINS[0], 2, 1_760_000_000_001 << 16, "beam", "b2", "set", {"notes": "new"}, {}, 1, 1)
    merge_one_at_a_time(one, [op, fresh])
    merge_batched(many, [op, fresh], 10)
    state = _state(one)
    assert [r[:3] for r in state["beam"]] == [("b1", None, '{"level":"L1"}'), ("b2", None, '{"notes":"new"}')]
    assert _state(many) == state
