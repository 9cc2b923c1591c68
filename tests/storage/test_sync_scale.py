"""Sync at scale: export lines straight from the stored canonical text; a large export splits into parts."""

import json

from storage import Store
from storage.bundle import export_bundles, import_bundles, op_line, part_path
from storage.clock import uuid7
from storage.db import transaction
from storage.oplog import OP_KEYS, canonical

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
