"""Load, the small version (``python -m bench.hub --scale`` runs 50 tablets x 500 ops).

Many tablets, two hub workers, one PostgreSQL: zero lost, zero duplicated, every tablet ends with
every op. No timing is asserted; the figures are printed.
"""

from __future__ import annotations

from tests.office.fleet import run_load


def test_many_tablets_two_workers_one_postgresql_nothing_lost_or_duplicated(pg_cluster, tmp_path):
    tablets, ops_each = 8, 50
    result = run_load([pg_cluster.new_database()], tmp_path, tablets, ops_each, workers=2)
    assert result.ops_on_hub == tablets * ops_each  # nothing lost
    assert result.hub_log_rows == tablets * ops_each  # nothing logged twice
    assert result.tablets_complete == tablets  # every tablet pulled every other tablet's ops
    assert len(result.push_latencies_s) >= tablets
    print(f"load: {result.ops_per_s:.0f} ops/s, p95 push {result.p95_s * 1000:.0f} ms")
