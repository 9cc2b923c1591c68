"""Run every benchmark and print one table: `python -m bench [--quick] [--only NAME ...]`.

Benchmarks: recheck, sync, report (modules of this package) and app (the tablet app under Xvfb,
run in a child process), and on request mutation (mutmut over core: not in the default run, it
takes minutes to tens of minutes; see bench/mutation.py). Each uses its own temporary files and
removes them. Figures are medians over repeats with their spread; baselines are measured in the same
run; the last row times two fixed workloads at the start and the end (``bench/machine.py``), so figures
from different machines, or from a machine whose speed drifted, can be read side by side. Nothing here is
a test.
"""

from __future__ import annotations

import argparse
import importlib
import sys
import time

from bench import machine
from bench.common import Row, own_peak_mb, print_table

NAMES = ("recheck", "sync", "report", "app", "siteopen")
ON_REQUEST = ("mutation",)  # too slow for the default run: only with --only


def main(argv: list[str] | None = None) -> int:
    """Parse arguments, run the chosen benchmarks, print the table; exit 1 if one crashed."""
    ap = argparse.ArgumentParser(prog="python -m bench", description=__doc__)
    ap.add_argument("--quick", action="store_true", help="smaller sizes and fewer repeats (a smoke run)")
    ap.add_argument("--only", nargs="+", choices=NAMES + ON_REQUEST, help="run only these benchmarks")
    args = ap.parse_args(argv)
    rows: list[Row] = []
    failed = False
    t0 = time.perf_counter()
    print("measuring this machine ...", file=sys.stderr, flush=True)
    start = machine.speed(args.quick)
    for name in args.only or NAMES:
        print(f"running {name} ...", file=sys.stderr, flush=True)
        try:
            module = importlib.import_module(f"bench.{name}")
            rows += module.run(quick=args.quick)
        except Exception as exc:  # report the crash in the table and go on with the others
            failed = True
            rows.append(Row(name, "FAILED", "", "", f"{type(exc).__name__}: {exc}"[:80], False))
    rows.append(machine.row(start, machine.speed(args.quick)))  # speeds differ between machines and over a run
    print_table(rows)
    print(
        f"\n({time.perf_counter() - t0:.0f} s; figures are medians, spread = (max - min) / median; "
        "ratios use baselines measured in this run; peak memory is each measured process's own VmHWM; "
        f"this bench process peaked at {own_peak_mb():,.0f} MB)"
    )
    return 1 if failed else 0


if __name__ == "__main__":
    raise SystemExit(main())
