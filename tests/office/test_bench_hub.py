"""bench/hub.py still runs (quick sizes, SQLite): it reports the push rate and p95. No timing is judged."""

import pytest

from bench.hub import run


@pytest.mark.slow
def test_hub_bench_quick_reports_rate_and_latency():
    rows = run(quick=True)
    assert [r.what for r in rows] == ["hub push, sqlite, 3x200 ops", "hub push p95 latency, sqlite"]
    assert rows[0].figure.endswith("ops/s")
    assert rows[1].figure.endswith("ms")
