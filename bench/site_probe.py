"""Child process of bench/siteopen.py, so the bench process itself stays small.

usage: python -m bench.site_probe build DB N | repeated DB N | open DB | old DB | recheck DB PROCESSES [nomemo]
build: a site of N varied beams written through the storage API (one transaction);
repeated: N beams on sites of SITE_BEAMS, each site's beams drawn from its own DESIGNS typical designs;
open: the site screen's data from stored results (view model rows, counts, levels, groups, open
deficiencies, findings not yet raised: what the screen's on_pre_enter asks for);
old: the same with a full recheck per beam (the path before results were stored);
recheck: the portfolio recheck over every beam (nomemo: without the per-process summary memo).
Prints one line: BENCH {"seconds": ..., "peak_mb": ...}.
"""

from __future__ import annotations

import json
import sys
import time
from typing import Any

from bench.common import own_peak_mb

BEAM: dict[str, Any] = {  # an invented roof beam (demo-style input, not a check value)
    "material": "glulam",
    "species": "D.Fir-L",
    "grade": "24f-E",
    "b_mm": 130,
    "bearings": [{"lateral": True, "rotation": True, "length_mm": 140}] * 2,
    "top_edge": {"braced_by": "purlins", "spacing_mm": 2400, "fastened": True},
    "loads": {"dead_kn_m": 2.0, "live_kn_m": 0.0, "snow_kn_m": 5.0},
    "top_stamp": "up",
    "use": "roof_no_ceiling",
}


def _design(rng: Any) -> dict[str, Any]:
    """One beam's engineering fields: span, depth, width, purlin spacing and loads drawn from ``rng``."""
    span = rng.randrange(4000, 9001, 10)
    return dict(
        BEAM,
        mark="",  # set per beam (``_write``); here to keep the record's key order
        spans_mm=[span],
        b_mm=rng.choice((80, 130, 175)),
        d_mm=38 * rng.randint(8, 14),
        top_edge=dict(BEAM["top_edge"], spacing_mm=min(span, rng.choice((600, 1200, 1800, 2400)))),
        loads={
            "dead_kn_m": rng.randint(100, 400) / 100,
            "live_kn_m": 0.0,
            "snow_kn_m": rng.randint(200, 800) / 100,
        },
    )


def build(db: str, n: int) -> None:
    """A site of n beams, seeded, each beam's engineering fields drawn for it (``_design``).

    Almost no two beams are alike (a portfolio, not one beam repeated), so the results differ.
    """
    import random

    rng = random.Random(14)
    _write(db, [(0, _design(rng)) for _ in range(n)], 1)


SITE_BEAMS = 2500  # beams a site in the repeated-members portfolio
DESIGNS = 40  # typical designs a site's beams are drawn from (rows of identical purlins: common practice)


def build_repeated(db: str, n: int) -> None:
    """N beams on sites of SITE_BEAMS, each site's beams drawn (seeded) from its own DESIGNS designs.

    Members repeat as in real buildings; n / SITE_BEAMS * DESIGNS distinct designs in all.
    """
    import random

    rng = random.Random(14)
    sites = -(-n // SITE_BEAMS)
    designs = [[_design(rng) for _ in range(DESIGNS)] for _ in range(sites)]
    _write(db, [(i // SITE_BEAMS, rng.choice(designs[i // SITE_BEAMS])) for i in range(n)], sites)


def _write(db: str, beams: list[tuple[int, dict[str, Any]]], sites: int) -> None:
    """Write (site number, design) beams through the storage API, one transaction, marks and places by order."""
    from storage import Store
    from storage.clock import uuid7
    from storage.db import transaction

    store = Store(db)
    site_ids = [store.create_site(name=f"Bench site {k + 1}" if sites > 1 else "Bench site").id for k in range(sites)]
    with transaction(store.db):
        for i, (k, design) in enumerate(beams):
            beam = dict(design, mark=f"B-{i}", site_id=site_ids[k], level=f"L{i % 12}", gridline=f"{i % 40}/{i % 7}")
            store._save_in_tx("beam", uuid7(), beam, "set", None)
    store.close()


def site_open(db: str, old: bool) -> dict[str, float]:
    """Time the site screen's data (without widgets: the recycling list builds only visible rows)."""
    from mobile.viewmodels.site import SiteViewModel
    from storage import Store

    store = Store(db)
    site_id = store.sites()[0].id
    t0, c0 = time.perf_counter(), time.process_time()
    vm = SiteViewModel(store, site_id)
    rows = [(b, r, vm.status_of(b)) for b, r in store.beams(site_id)] if old else vm.beam_rows()
    vm.counts(rows)
    vm.levels(rows)
    groups = vm.groups(rows=rows)
    if not old:  # the site screen's on_pre_enter asks for these too (from the stored results)
        vm.deficiency_groups()
        vm.unraised_warning()
    data = [(where, len(items)) for where, items in groups]
    return {
        "seconds": time.perf_counter() - t0,
        "cpu_s": time.process_time() - c0,  # this process's own CPU: less shaken by other work on the machine
        "rows": float(sum(n for _, n in data)),
    }


def portfolio(db: str, processes: int, memo: bool = True) -> dict[str, float]:
    """Time the portfolio recheck (every beam, stored), with this process's and its workers' CPU.

    With one process, the time spent inside ``core.recheck.recheck_with_rows`` is summed too (``recheck_s``),
    so the pipeline around it (reading, validation, comparing, writing, progress) can be told apart:
    ``seconds - recheck_s``.
    """
    import importlib
    import os

    from storage import Store, results
    from storage.results import recheck_all

    if not memo:
        results.MEMO_MAX = 0  # before the workers fork: they inherit it

    module: Any = importlib.import_module("core.recheck")  # the package (``core.recheck`` is also the function)
    inside = [0.0, 0.0]  # wall, CPU
    real = module.recheck_with_rows

    def timed(*args: object, **kwargs: object) -> object:
        t, c = time.perf_counter(), time.process_time()
        try:
            return real(*args, **kwargs)
        finally:
            inside[0] += time.perf_counter() - t
            inside[1] += time.process_time() - c

    if processes == 1:
        module.recheck_with_rows = timed  # what storage.results._summary_of calls
    store = Store(db)
    c0, t0 = os.times(), time.perf_counter()
    run = recheck_all(store.db, processes=processes)
    seconds, c1 = time.perf_counter() - t0, os.times()
    out = {
        "seconds": seconds,
        "beams": float(run.rechecked),
        "cpu_s": c1.user - c0.user + c1.system - c0.system,
        "workers_cpu_s": c1.children_user - c0.children_user + c1.children_system - c0.children_system,
    }
    if processes == 1:
        out["recheck_s"], out["recheck_cpu_s"] = inside
    return out


if __name__ == "__main__":
    mode, path = sys.argv[1], sys.argv[2]
    out: dict[str, float] = {}
    if mode == "build":
        t = time.perf_counter()
        build(path, int(sys.argv[3]))
        out = {"seconds": time.perf_counter() - t}
    elif mode in ("open", "old"):
        out = site_open(path, old=mode == "old")
    elif mode == "repeated":
        t = time.perf_counter()
        build_repeated(path, int(sys.argv[3]))
        out = {"seconds": time.perf_counter() - t}
    elif mode == "recheck":
        out = portfolio(path, int(sys.argv[3]), memo=sys.argv[4:] != ["nomemo"])
    out["peak_mb"] = own_peak_mb()
    print("BENCH " + json.dumps(out), flush=True)
