"""The bench runner still runs (python -m bench --quick): it prints one row per measurement.

No timing is judged here (machines are noisy); only that every benchmark completes and reports.
"""

import fnmatch
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.mark.slow
def test_bench_quick_prints_every_row():
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    env.pop("DISPLAY", None)  # the app bench starts its own Xvfb
    proc = subprocess.run(
        [sys.executable, "-m", "bench", "--quick"], cwd=ROOT, env=env, capture_output=True, text=True, timeout=900
    )
    assert proc.returncode == 0, proc.stdout[-3000:] + proc.stderr[-3000:]
    for what in (
        "recheck, simple span, status only",
        "recheck, simple span, full traces",
        "recheck, 3-span continuous",
        "sync export+import",
        "notice, 10 items",
        "app cold start",
        "field change to refreshed panel",
        "app: site open, 1,000 beams",
        "app: site open, 1,000 beams all stale (a table correction): longest UI pause",
        "notice, 60 items with photos: peak memory",
        "site open, 1,000 beams (stored results)",
        "portfolio recheck, 2,000 beams, 2 processes",
        "portfolio pipeline without the recheck",
        "machine: 10M Python additions",
    ):
        assert what in proc.stdout, proc.stdout
    assert "FAILED" not in proc.stdout
    assert "this bench process peaked at" in proc.stdout


def test_mutation_run_covers_every_module_of_core():
    # every .py file of core is mutated by exactly one of the two runs (core/clauses, or the rest)
    from bench.mutation import _rest_of_core

    globs = ["core/clauses/*", *_rest_of_core(ROOT)]
    assert "core/recheck/*" in globs
    files = [p.relative_to(ROOT).as_posix() for p in (ROOT / "core").rglob("*.py") if p.name != "__init__.py"]
    for f in files:
        hits = [g for g in globs if fnmatch.fnmatch(f, g)]
        assert len(hits) == 1, (f, hits)
