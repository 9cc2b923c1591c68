"""The tablet app under Xvfb: cold start to the first drawn screen, and field change to refreshed panel.

Cold start: wall time from launching `python -m bench.app_probe` (interpreter, imports, opening
the database, building six screens) to the first frame flipped on screen, on a database that
already holds the demo site (first-run loading is not part of a start). Baseline, same run: a
one-label Kivy app started the same way. Refresh: from a purlin-spacing entry on the beam form
(autosave with fsync, recheck, panel rebuilt) to the next frame flipped; baseline: the bare
`core.recheck` of the same beam, measured in the same process.
Site open in the app (issue 14 item 1): a tap on a site of 10,000 beams (1,000 with --quick, built by
bench.site_probe, results stored) to the first frame showing the recycling list's rows, and the app
process's own peak memory (VmHWM), in the app's own window (1280x800, the size it sets; the row names it)
and the median time spent in full cyclic collections during the open; baseline: the same for the demo
site (13 beams). Then the same site with every result made stale (as a table correction does): the longest
pause between UI ticks after the screen's first frame while the app rechecks it in a worker thread, beside the
stored-results open (no aim; before the worker, the pause was the whole recheck).
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import sqlite3
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import cast

from bench.common import Row, fmt_time

ROOT = Path(__file__).resolve().parents[1]


def _display() -> tuple[subprocess.Popen[bytes] | None, str]:
    """Use $DISPLAY if set, else start a private Xvfb."""
    if os.environ.get("DISPLAY"):
        return None, os.environ["DISPLAY"]
    if shutil.which("Xvfb") is None:
        msg = "no display and no Xvfb (scripts/setup.sh installs it)"
        raise RuntimeError(msg)
    for n in range(90, 110):
        if not Path(f"/tmp/.X11-unix/X{n}").exists() and not Path(f"/tmp/.X{n}-lock").exists():
            proc = subprocess.Popen(
                ["Xvfb", f":{n}", "-screen", "0", "1280x800x24", "-nolisten", "tcp"],
                stdout=subprocess.DEVNULL,
                stderr=subprocess.DEVNULL,
                start_new_session=True,
            )
            for _ in range(50):
                if Path(f"/tmp/.X11-unix/X{n}").exists():
                    return proc, f":{n}"
                time.sleep(0.1)
            proc.kill()
    msg = "could not start Xvfb"
    raise RuntimeError(msg)


def _probe(mode: str, db: Path, display: str, home: Path) -> tuple[float, dict[str, object]]:
    env = dict(
        os.environ, DISPLAY=display, HOME=str(home), KIVY_NO_ARGS="1", KIVY_NO_CONSOLELOG="1", PYTHONPATH=str(ROOT)
    )
    t0 = time.time()
    proc = subprocess.Popen(
        [sys.executable, "-m", "bench.app_probe", mode, str(db)],
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        text=True,
        env=env,
        cwd=ROOT,
        start_new_session=True,
    )
    try:
        out, _ = proc.communicate(timeout=120)
    except subprocess.TimeoutExpired:
        os.killpg(proc.pid, signal.SIGKILL)
        msg = f"app probe ({mode}) did not finish in 120 s"
        raise RuntimeError(msg) from None
    line = next((x for x in out.splitlines() if x.startswith("BENCH ")), None)
    if line is None:
        msg = f"app probe ({mode}) printed no result:\n{out[-2000:]}"
        raise RuntimeError(msg)
    data = json.loads(line[6:])
    return float(data["first_frame_wall"]) - t0, data


def run(quick: bool = False) -> list[Row]:
    """Measure cold start (app vs bare Kivy) and refresh (panel vs bare recheck)."""
    work = Path(tempfile.mkdtemp(prefix="bracewalk-bench-app-"))
    xvfb, display = _display()
    try:
        from mobile.demo.run import load_demo, raise_all
        from storage import Store

        db = work / "bench.db"
        store = Store(db)
        raise_all(store, load_demo(store))
        store.close()
        home = work / "home"
        (home / ".kivy").mkdir(parents=True)
        repeats = 2 if quick else 5
        _probe("bare", db, display, home)  # warm the OS file cache for both
        bare = [_probe("bare", db, display, home)[0] for _ in range(repeats)]
        starts, refresh, rechecks = [], [], []
        for _ in range(repeats):
            start, data = _probe("app", db, display, home)
            starts.append(start)
            refresh += cast(list[float], data["refresh_ms"])
            rechecks += cast(list[float], data["recheck_ms"])
        site_rows = _site_open(work, db, display, home, 1000 if quick else 10_000, repeats)
        s, b = statistics.median(starts), statistics.median(bare)
        r, c = statistics.median(refresh), statistics.median(rechecks)
        p95 = sorted(refresh)[int(0.95 * (len(refresh) - 1))]
        spread_s = 100 * (max(starts) - min(starts)) / s
        spread_r = 100 * (max(refresh) - min(refresh)) / r
        return [
            Row(
                "app cold start to first frame",
                fmt_time(s),
                fmt_time(b) + " (bare Kivy)",
                f"{s / b:.1f}x",
                "< 2 s",
                s < 2.0,
                f"{spread_s:.0f}%",
            ),
            Row(
                "field change to refreshed panel",
                f"{r:.1f} ms (p95 {p95:.0f} ms)",
                f"{c:.2f} ms (recheck)",
                f"{r / c:.0f}x",
                "< 16 ms",
                r < 16.0,
                f"{spread_r:.0f}%",
            ),
            *site_rows,
        ]
    finally:
        if xvfb is not None:
            os.killpg(xvfb.pid, signal.SIGTERM)
            xvfb.wait()
        shutil.rmtree(work, ignore_errors=True)


def _site_open(work: Path, demo_db: Path, display: str, home: Path, n: int, repeats: int) -> list[Row]:
    """Site open in the app: n beams against the demo site (time to rows on screen, the app's peak memory)."""
    big = work / f"site{n}.db"
    for args in (("build", str(big), str(n)), ("open", str(big))):  # the second stores every result
        subprocess.run([sys.executable, "-m", "bench.site_probe", *args], cwd=ROOT, check=True, capture_output=True)
    runs = {
        name: [_probe("site", path, display, home)[1] for _ in range(repeats)]
        for name, path in (("big", big), ("demo", demo_db))
    }
    stale = []
    for _ in range(repeats):  # every result made stale again before each open (the open rechecks and stores them)
        con = sqlite3.connect(big)
        with con:
            con.execute("UPDATE beam_result SET input_hash = ''")
        con.close()
        stale.append(_probe("stale", big, display, home)[1])
    pause = statistics.median(float(cast(float, d["longest_pause_s"])) for d in stale)
    first = statistics.median(float(cast(float, d["first_frame_s"])) for d in stale)
    listed = statistics.median(float(cast(float, d["site_open_s"])) for d in stale)
    med = {k: statistics.median(float(cast(float, d["site_open_s"])) for d in v) for k, v in runs.items()}
    peak = {k: max(float(cast(float, d["peak_mb"])) for d in v) for k, v in runs.items()}
    shown = int(cast(float, runs["big"][0]["beams_shown"]))
    width, height = cast(list[int], runs["big"][0]["window"])
    full_ms = statistics.median(float(cast(list[float], d["gc_ms"])[2]) for d in runs["big"])
    return [
        Row(
            f"app: site open, {n:,} beams, tap to rows on screen (window {width}x{height})",
            f"{fmt_time(med['big'])}, app peak {peak['big']:.0f} MB ({shown} rows built; full GC {full_ms:.0f} ms)",
            f"demo site (13 beams) {fmt_time(med['demo'])}, {peak['demo']:.0f} MB",
            f"{med['big'] / med['demo']:.1f}x",
            "< 0.5 s, app < 400 MB at 10k",
            med["big"] < 0.5 and peak["big"] < 400 if n >= 10_000 else None,
        ),
        Row(
            f"app: site open, {n:,} beams all stale (a table correction): longest UI pause after the first frame",
            f"{fmt_time(pause)} (first frame {fmt_time(first)}; rows once rechecked {fmt_time(listed)})",
            f"the same site, results stored: {fmt_time(med['big'])}",
            f"{pause / med['big']:.1f}x",
            "none (before: the whole recheck on the UI thread, 4.4 s at 10k)",
            None,
        ),
    ]


if __name__ == "__main__":
    from bench.common import print_table

    print_table(run())
