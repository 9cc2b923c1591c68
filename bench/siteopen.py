"""Site open at 1k / 10k beams (stored results) and the portfolio recheck, each in a child process.

Site open: the site screen's data read from stored results (everything its on_pre_enter asks for); the
recycling list then builds only the visible rows. Baseline, same run: the path before results were
stored (a full recheck of every beam), at 1k beams only (it is linear: about 1.5 ms per beam).
Portfolio: `recheck_all` over every beam with 2 worker processes; baseline: 1 process; and the
pipeline's own rate without the time inside the core recheck. Peak memory is each child's own
(VmHWM, bench.common.own_peak_mb; for the portfolio, the parent's: workers are separate processes);
the bench process only starts children.
"""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

from bench.common import Row, fmt_time

ROOT = Path(__file__).resolve().parents[1]


def probe(*args: str) -> dict[str, float]:
    """Run bench.site_probe with args; return its BENCH line."""
    out = subprocess.run(
        [sys.executable, "-m", "bench.site_probe", *args], cwd=ROOT, capture_output=True, text=True, timeout=3600
    )
    line = next((x for x in out.stdout.splitlines() if x.startswith("BENCH ")), None)
    if line is None:
        msg = f"site probe {args[0]} failed:\n{out.stderr[-1500:]}"
        raise RuntimeError(msg)
    return dict(json.loads(line[6:]))


def run(quick: bool = False) -> list[Row]:
    """Site open (first and warm) at 1k and 10k beams, and the portfolio recheck."""
    work = Path(tempfile.mkdtemp(prefix="bracewalk-bench-site-"))
    rows: list[Row] = []
    try:
        sizes = (200, 1000) if quick else (1000, 10_000)
        old = None
        for n in sizes:
            db = str(work / f"site{n}.db")
            probe("build", db, str(n))
            if n == sizes[0]:
                old = probe("old", db)
            first = probe("open", db)  # no stored results yet: rechecks every beam once and stores it
            warm = probe("open", db)
            base = f"{fmt_time(old['seconds'])} / {old['peak_mb']:.0f} MB at {sizes[0]:,}" if old else ""
            rows.append(
                Row(
                    f"site open, {n:,} beams (stored results)",
                    f"{fmt_time(warm['seconds'])} (CPU {fmt_time(warm['cpu_s'])}), {warm['peak_mb']:.0f} MB",
                    base,
                    "",
                    "< 0.5 s, < 400 MB at 10k",
                    warm["seconds"] < 0.5 and warm["peak_mb"] < 400 if n >= 10_000 else None,
                )
            )
            rows.append(
                Row(
                    f"site open, {n:,} beams, first (results computed)",
                    f"{fmt_time(first['seconds'])}, {first['peak_mb']:.0f} MB",
                    "",
                    "",
                    "-",
                    None,
                )
            )
        rows += portfolio_rows(work, 2000 if quick else 100_000)
        rows += repeated_rows(work, 2000 if quick else 100_000)
    finally:
        shutil.rmtree(work, ignore_errors=True)
    return rows


def portfolio_rows(work: Path, n: int) -> list[Row]:
    """The portfolio recheck of n varied beams: 2 processes against 1, and the pipeline without the recheck.

    Each run starts from the same freshly built database (a copy), so both recheck every beam and
    store every result. The one-process run also sums the time inside ``core.recheck.recheck``:
    excluding it leaves the pipeline (reading records, validation, comparing with the stored
    results, writing in batches, progress), whose rate combines with a faster core as
    1 / (1 / pipeline rate + 1 / recheck rate).
    """
    db = work / "portfolio.db"
    probe("build", str(db), str(n))
    runs = {}
    for processes in (1, 2):
        copy = work / f"portfolio-{processes}.db"
        shutil.copy(db, copy)
        runs[processes] = probe("recheck", str(copy), str(processes))
        copy.unlink()
    one, two = runs[1], runs[2]
    rate = n / two["seconds"]
    pipeline_s = one["seconds"] - one["recheck_s"]
    pipeline_cpu = one["cpu_s"] - one["recheck_cpu_s"]
    return [
        Row(
            f"portfolio recheck, {n:,} beams, 2 processes",
            f"{fmt_time(two['seconds'])} ({rate:,.0f} beams/s), {two['peak_mb']:.0f} MB; "
            f"CPU parent {two['cpu_s']:.1f} s, workers {two['workers_cpu_s']:.1f} s",
            f"1 process {fmt_time(one['seconds'])} ({n / one['seconds']:,.0f} beams/s), {one['peak_mb']:.0f} MB",
            f"{one['seconds'] / two['seconds']:.2f}x",
            f"100k < 10 s (here ~{100_000 / rate:.1f} s)",
            100_000 / rate < 10,
        ),
        Row(
            f"portfolio pipeline without the recheck, {n:,} beams, 1 process",
            f"{fmt_time(pipeline_s)} ({n / pipeline_s:,.0f} beams/s); CPU {pipeline_cpu:.2f} s "
            f"({n / pipeline_cpu:,.0f} beams/s)",
            f"core recheck (status and rows used) alone {fmt_time(one['recheck_s'])} "
            f"({n / one['recheck_s']:,.0f} beams/s); "
            f"CPU {one['recheck_cpu_s']:.2f} s ({n / one['recheck_cpu_s']:,.0f} beams/s)",
            f"{pipeline_cpu / one['cpu_s']:.0%} of CPU",
            "-",
            None,
        ),
    ]


def repeated_rows(work: Path, n: int) -> list[Row]:
    """The portfolio recheck where members repeat as in real buildings: the summary memo on against off.

    n beams on sites of ``SITE_BEAMS``, each site's beams drawn from its own ``DESIGNS`` designs
    (bench/site_probe.py ``build_repeated``). Not the aim set: the aim is measured on varied beams.
    """
    from bench.site_probe import DESIGNS, SITE_BEAMS

    db = work / "repeated.db"
    probe("repeated", str(db), str(n))
    runs = {}
    for memo in ("nomemo", "memo"):
        copy = work / f"repeated-{memo}.db"
        shutil.copy(db, copy)
        runs[memo] = probe("recheck", str(copy), "2", memo)
        copy.unlink()
    db.unlink()
    on, off = runs["memo"], runs["nomemo"]
    sites = -(-n // SITE_BEAMS)
    return [
        Row(
            f"portfolio recheck, {n:,} beams, repeated members ({sites} site{'s' * (sites > 1)} x {DESIGNS} designs = "
            f"{sites * DESIGNS:,} distinct), 2 processes, summary memo (NOT the aim set)",
            f"{fmt_time(on['seconds'])} ({n / on['seconds']:,.0f} beams/s), {on['peak_mb']:.0f} MB; "
            f"CPU parent {on['cpu_s']:.1f} s, workers {on['workers_cpu_s']:.1f} s",
            f"memo off {fmt_time(off['seconds'])}; CPU parent {off['cpu_s']:.1f} s, "
            f"workers {off['workers_cpu_s']:.1f} s",
            f"{off['seconds'] / on['seconds']:.2f}x",
            "- (aim: varied beams, above)",
            None,
        )
    ]
