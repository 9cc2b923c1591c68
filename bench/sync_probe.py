"""Child process of bench/sync.py's large rows, so each figure's peak memory is its own.

usage: python -m bench.sync_probe build DB N | export DB OUT | import DB TRUST FILE...
build: N ops (a site, then beams and one-field edits) written straight into the op log with SQL
(valid ops of the save path's shape; only the exporting side needs them, so no projection is built);
export: `export_bundles` into OUT (split into parts; the first export signs every op once);
import: `import_bundles` of the parts, in order, into a database that trusts the device listed in the
TRUST file (``DB.device.json``, written by build: what the hub would list).
Prints one line: BENCH {"seconds": ..., "peak_mb": ..., ...}.
"""

from __future__ import annotations

import json
import sys
import time
from pathlib import Path

from bench.common import own_peak_mb

KEY = "bench-only-firm-key"


def build(db: str, n: int) -> None:
    """N valid ops of one device in its log, written in batches."""
    from storage import Store
    from storage.db import SCHEMA_VERSION, transaction
    from storage.oplog import canonical

    store = Store(db, firm_key=KEY)
    origin = store.device_id
    site = "0190aaaa-0000-7000-8000-00000000b001"
    wall = 1_760_000_000_000
    rows = []
    for seq in range(1, n + 1):
        if seq == 1:
            entity, rid = "site", site
            payload: dict[str, object] = {"name": "Bench Site", "address": "1 Test Lane"}
        elif seq <= max(2, n // 10):
            entity, rid = "beam", f"beam-{seq:07d}"
            payload = {"mark": rid, "site_id": site, "level": "Roof", "d_mm": 456, "b_mm": 130}
        else:
            entity, rid = "beam", f"beam-{2 + seq % max(1, n // 10 - 1):07d}"
            payload = {"notes": f"checked at gridline {seq % 30}"}
        hlc = ((wall + seq) << 16) | 0
        rows.append((origin, seq, hlc, entity, rid, "set", canonical(payload), "{}", SCHEMA_VERSION, wall + seq))
        if len(rows) == 50_000 or seq == n:
            with transaction(store.db):
                store.db.conn.executemany("INSERT INTO op VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)", rows)
            rows = []
    with transaction(store.db):
        store.db.execute("INSERT OR REPLACE INTO seen VALUES (?, ?)", [origin, n])
        store.db.execute("UPDATE meta SET value=? WHERE key='seq'", [str(n)])
        store.db.execute("UPDATE meta SET value=? WHERE key='hlc'", [str(((wall + n) << 16) | 0)])
    from storage import identity

    listing = {"device_id": origin, "public_key": identity.public_text(identity.device_key(store.db)), "name": "src"}
    Path(db + ".device.json").write_text(json.dumps(listing), encoding="utf-8")
    store.close()


if __name__ == "__main__":
    mode, path = sys.argv[1], sys.argv[2]
    out: dict[str, object] = {}
    t0 = time.perf_counter()
    if mode == "build":
        build(path, int(sys.argv[3]))
    elif mode == "export":
        from storage import Store
        from storage.bundle import export_bundles, part_path

        manifests = export_bundles(Store(path, firm_key=KEY), sys.argv[3])
        out["files"] = [str(part_path(Path(sys.argv[3]), i + 1)) for i in range(len(manifests))]
        out["largest_mb"] = max(Path(f).stat().st_size for f in out["files"]) / 1e6  # type: ignore[attr-defined]
    elif mode == "import":
        from storage import Store, identity
        from storage.bundle import import_bundles

        dst = Store(path, firm_key=KEY)
        identity.trust_devices(dst.db, [json.loads(Path(sys.argv[3]).read_text(encoding="utf-8"))], at_ms=0)
        reports = import_bundles(dst, sys.argv[4:])
        out["outcomes"] = sorted({r.outcome for r in reports})
        out["ops_new"] = sum(r.ops_new for r in reports)
    out["seconds"] = time.perf_counter() - t0
    out["peak_mb"] = own_peak_mb()
    print("BENCH " + json.dumps(out), flush=True)
