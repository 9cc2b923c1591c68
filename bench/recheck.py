"""Recheck throughput: simple-span and 3-span continuous glulam beams per second.

Each run rechecks a fixed, seeded set of varied beams (spans, sizes, purlin spacing, loads all
differ, so a geometry or member cache rarely hits) with `core.recheck.recheck`: the full result
(every region, shear, bearing, deflection, findings and the governing cases' clause traces), and for
simple spans also the status-only result (``traces=False``: the same numbers and findings, no trace) and
the status-only result with the table rows it used (``recheck_with_rows``: what the portfolio stores).

Baseline, measured in the same run: bare arithmetic of the same formulas for the same beams,
with no models, tables or traces: NBC gravity combinations with KD, wL^2/8 and wL/2 (or the
handbook coefficients for three equal spans), Fb, KZbg, CB, CK, KL, Mr, Vr, Qr and 5wL^4/384EI.
The ratio (recheck time / baseline time) is what the library costs over the bare formulas.
"""

from __future__ import annotations

import math
import random
from collections.abc import Callable
from functools import partial

from bench.common import Row, Sample, fmt_rate, measure
from core.models import Beam
from core.recheck import recheck, recheck_with_rows

# D.Fir-L 24f-E values as in core/data/glulam_grades.csv (read here so the baseline needs no lookup).
FB_POS, FV, FCP, E = 30.6, 2.0, 7.0, 12800.0
UNIT_WEIGHT = 4.9  # kN/m3, core/data/densities.csv D.Fir-L glulam


def _each(fn: Callable[[Beam], object], items: list[Beam]) -> None:
    """Fn over every beam, each result let go as the next is made: the timed body of a recheck sample.

    As the recheck's users take it: the portfolio and a site's refresh keep a small row of each result,
    never the results themselves. Keeping all 2,000 results alive (a list, as this body did before)
    measured the cyclic collector walking them too: 15-25 % of the time, in no user's path.
    """
    for b in items:
        fn(b)


def beams(n_spans: int, count: int, seed: int = 7) -> list[Beam]:
    """A seeded set of varied D.Fir-L 24f-E glulam beams on purlins, `n_spans` equal spans."""
    rng = random.Random(seed)
    out = []
    for i in range(count):
        span = rng.choice(range(4000, 12001, 100))
        spacing = rng.choice((600, 1200, 1800, 2400, 3000))
        data = {
            "mark": f"B-{i}",
            "material": "glulam",
            "species": "D.Fir-L",
            "grade": "24f-E",
            "b_mm": rng.choice((80, 130, 175, 215)),
            "d_mm": 38 * rng.randint(8, 24),
            "spans_mm": [span] * n_spans,
            "bearings": [{"lateral": True, "rotation": True, "length_mm": 140}] * (n_spans + 1),
            "top_edge": {"braced_by": "purlins", "spacing_mm": min(spacing, span), "fastened": True},
            "loads": {
                "dead_kn_m": round(rng.uniform(1, 4), 2),
                "live_kn_m": 0.0,
                "snow_kn_m": round(rng.uniform(2, 8), 2),
            },
        }
        out.append(Beam.model_validate(data))
    return out


def _combos(d: float, s: float) -> list[tuple[float, float]]:
    """(factored w, KD) for 1.4D and 1.25D + 1.5S (the combinations that apply with D and S only)."""
    ps = s
    kd = 1.0 if d <= ps else max(0.65, 1.0 - 0.5 * math.log10(d / ps))
    return [(1.4 * d, 0.65), (1.25 * d + 1.5 * s, kd)]


def _kl(lu: float, b: float, d: float, fb: float) -> float:
    if d / b <= 2.5:
        return 1.0
    cb = math.sqrt(1.92 * lu * d / (b * b))
    ck = math.sqrt(0.97 * E / fb)
    if cb <= 10:
        return 1.0
    if cb <= ck:
        return 1.0 - (cb / ck) ** 4 / 3.0
    if cb <= 50:
        return 0.65 * E / (cb * cb * fb)
    return 0.0


def bare_simple(b: Beam) -> float:
    """Bare arithmetic for one simple span; returns the governing utilisation."""
    bw, dd, span = b.b_mm, b.d_mm, b.spans_mm[0]
    dead = b.loads.dead_kn_m + UNIT_WEIGHT * bw * dd * 1e-6
    snow = b.loads.snow_kn_m
    s_mod, area = bw * dd * dd / 6.0, bw * dd
    lu = b.top_edge.spacing_mm or span
    worst = 0.0
    for w, kd in _combos(dead, snow):
        fb = FB_POS * kd
        m, v = w * span * span / 8.0, w * span / 2.0
        kzbg = min(1.3, ((130 / bw) * (610 / dd) * (9100 / span)) ** 0.1)
        mr = 0.9 * fb * s_mod * min(kzbg, _kl(lu, bw, dd, fb))
        vr = 0.9 * FV * kd * 2 * area / 3
        qr = 0.9 * FCP * kd * bw * 140
        worst = max(worst, m / mr if mr else math.inf, v / vr, v / qr)
    ei = E * bw * dd**3 / 12.0
    for w, ratio in ((snow, 240.0), (dead + snow, 180.0)):
        worst = max(worst, 5 * w * span**4 / (384 * ei) / (span / ratio))
    return worst


# Handbook coefficients for three equal spans under uniform load (positive end-span moment,
# interior support moment, largest shear): all spans loaded and the worst pattern of the variable load.
_ALL = (0.080, 0.100, 0.600)
_PATTERN = (0.101, 0.117, 0.617)


def bare_three_span(b: Beam) -> float:
    """Bare arithmetic for three equal spans by handbook coefficients; governing utilisation."""
    bw, dd, span = b.b_mm, b.d_mm, b.spans_mm[0]
    dead = b.loads.dead_kn_m + UNIT_WEIGHT * bw * dd * 1e-6
    snow = b.loads.snow_kn_m
    s_mod, area = bw * dd * dd / 6.0, bw * dd
    lu = b.top_edge.spacing_mm or span
    worst = 0.0
    for w, kd in _combos(dead, snow):
        fb = FB_POS * kd
        for coeff in (_ALL, _PATTERN):
            m_pos, m_neg, v = coeff[0] * w * span**2, coeff[1] * w * span**2, coeff[2] * w * span
            kzbg_pos = min(1.3, ((130 / bw) * (610 / dd) * (9100 / (0.8 * span))) ** 0.1)
            kzbg_neg = min(1.3, ((130 / bw) * (610 / dd) * (9100 / (0.4 * span))) ** 0.1)
            mr_pos = 0.9 * fb * s_mod * min(kzbg_pos, _kl(lu, bw, dd, fb))
            mr_neg = 0.9 * fb * s_mod * min(kzbg_neg, _kl(0.4 * span, bw, dd, fb))
            vr = 0.9 * FV * kd * 2 * area / 3
            qr = 0.9 * FCP * kd * bw * 140
            worst = max(
                worst,
                m_pos / mr_pos if mr_pos else math.inf,
                m_neg / mr_neg if mr_neg else math.inf,
                v / vr,
                2 * v / qr,
            )
    ei = E * bw * dd**3 / 12.0
    for w, ratio in ((snow, 240.0), (dead + snow, 180.0)):
        worst = max(worst, 0.0069 * w * span**4 / ei / (span / ratio))
    return worst


def _rate(sample: Sample, count: int) -> float:
    return count / sample.median_s


def status_only(b: Beam) -> object:
    """The recheck without traces (status, numbers and findings)."""
    return recheck(b, traces=False)


def status_and_rows(b: Beam) -> object:
    """The recheck without traces and the table rows it used (what the portfolio stores)."""
    return recheck_with_rows(b)


def run(quick: bool = False) -> list[Row]:
    """Measure both beam kinds; return the table rows."""
    from core.compiled import running_compiled

    build = "compiled core" if running_compiled() else "core from source"  # scripts/build_core.py
    rows = []
    for label, n_spans, count, fn, bare, aim_rate in (
        ("recheck, simple span, status only", 1, 400 if quick else 2000, status_only, bare_simple, 20_000),
        ("recheck, simple span, full traces", 1, 400 if quick else 2000, recheck, bare_simple, 10_000),
        ("recheck, simple span, status and rows used", 1, 400 if quick else 2000, status_and_rows, bare_simple, 0),
        ("recheck, 3-span continuous", 3, 100 if quick else 400, recheck, bare_three_span, 2_000),
    ):
        items = beams(n_spans, count)
        for b in items[:20]:
            recheck(b)  # warm the table cache
        repeats = 3 if quick else 7
        lib = measure(partial(_each, fn, items), repeats)
        base = measure(partial(_each, bare, items), repeats)
        rate, base_rate = _rate(lib, count), _rate(base, count)
        ratio = lib.median_s / base.median_s
        aim = f">= {aim_rate:,}/s" if aim_rate else "none (the portfolio's path)"
        met = rate >= aim_rate if aim_rate else None
        rows.append(
            Row(
                f"{label} ({build})",
                fmt_rate(rate, "beams"),
                fmt_rate(base_rate, "beams"),
                f"{ratio:.1f}x",
                aim,
                met,
                f"{lib.spread_pct:.0f}%",
            )
        )
    return rows


if __name__ == "__main__":
    from bench.common import print_table

    print_table(run())
