"""Shared helpers for the benchmarks: repeat a measurement, summarise it, print one table.

Machines here are noisy, so every figure is a median over repeats with its spread, and every
aim that compares to a baseline uses a baseline measured in the same run. Nothing here is a
pass/fail test; the suite never times anything.
"""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path


@dataclass(frozen=True)
class Sample:
    """Median and spread (min..max) of repeated timings, seconds."""

    median_s: float
    low_s: float
    high_s: float
    repeats: int

    @property
    def spread_pct(self) -> float:
        """(max - min) / median, percent."""
        return 100.0 * (self.high_s - self.low_s) / self.median_s if self.median_s else 0.0


def measure(fn: Callable[[], object], repeats: int, setup: Callable[[], object] | None = None) -> Sample:
    """Time fn() `repeats` times (setup() untimed before each), return median and range."""
    times = []
    for _ in range(repeats):
        if setup is not None:
            setup()
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return Sample(statistics.median(times), min(times), max(times), repeats)


@dataclass(frozen=True)
class Row:
    """One line of the bench table."""

    what: str
    figure: str
    baseline: str
    ratio: str
    aim: str
    met: bool | None  # None when the aim cannot be judged here
    spread: str = ""


def fmt_rate(per_s: float, unit: str) -> str:
    """A rate with thousands separators, e.g. '21,400 beams/s'."""
    return f"{per_s:,.0f} {unit}/s"


def fmt_time(seconds: float) -> str:
    """Seconds or milliseconds, whichever reads better."""
    return f"{seconds * 1000:.1f} ms" if seconds < 1.0 else f"{seconds:.2f} s"


def print_table(rows: list[Row]) -> None:
    """Print the rows as one aligned plain-text table."""
    head = ("measured", "figure", "spread", "baseline", "ratio", "aim", "met")
    cells = [head] + [
        (r.what, r.figure, r.spread, r.baseline, r.ratio, r.aim, "-" if r.met is None else ("yes" if r.met else "NO"))
        for r in rows
    ]
    widths = [max(len(c[i]) for c in cells) for i in range(len(head))]
    for n, c in enumerate(cells):
        print("  ".join(v.ljust(w) for v, w in zip(c, widths, strict=True)).rstrip())
        if n == 0:
            print("  ".join("-" * w for w in widths))


def own_peak_mb(status: Path = Path("/proc/self/status")) -> float:
    """Peak resident memory of this process's own program, MB: VmHWM of /proc/self/status (Linux).

    Not ``getrusage(RUSAGE_SELF).ru_maxrss``: Linux carries that across fork and execve, so a child
    started by a large process reports the parent's peak (getrusage(2); VmHWM belongs to the address
    space, which execve replaces, proc(5)). Every memory figure of the bench is read here, in the
    process being measured.
    """
    try:
        lines = status.read_text().splitlines()
    except OSError as exc:
        msg = f"peak memory needs {status} (Linux): {exc}"
        raise RuntimeError(msg) from exc
    for line in lines:
        if line.startswith("VmHWM:"):
            value, unit = line.split()[1:3]
            if unit != "kB":
                msg = f"VmHWM in {status} is in {unit!r}, expected 'kB'"
                raise RuntimeError(msg)
            return int(value) / 1024
    msg = f"no VmHWM line in {status}"
    raise RuntimeError(msg)
