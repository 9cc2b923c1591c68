"""A seeded set of beams of every kind and the SHA-256 of `bracewalk check`'s output for each.

The golden file (``golden_check.sha256``) pins the exact bytes the command printed before the recheck
was reorganised for speed, so any change in a number, a trace line or a remedy shows up as a changed
hash. One line per beam: its index, the SHA-256 of the recheck's JSON as the command formats it (every
beam), and the SHA-256 of the whole printed output with the remedies (every ``FULL_EVERY``-th beam; ``-``
for the others: remedies recheck a beam tens of times, which made the whole set too slow to write here).
The inputs are invented (every material, span layout, bearing and bracing state, use, option and uplift
case), not check values; the engineering itself is tested elsewhere against outside sources.

Regenerate (only when an engineering change is intended and reviewed):
``.venv/bin/python -m tests.core.golden --write --processes 2``.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import multiprocessing
import random
import sys
from pathlib import Path
from typing import Any

from core.models import Beam
from core.recheck import recheck
from mobile.cli import check_output
from mobile.units import check_beam_json

GOLDEN = Path(__file__).with_name("golden_check.sha256")
VERSIONS = Path(__file__).with_name("golden_versions.txt")  # "<core.results.RESULTS_VERSION> <SHA-256 of GOLDEN>"
SEED = 20261202
COUNT = 5000
FAST_COUNT = 500  # the subset run in the fast suite
FULL_EVERY = 10  # the whole output (with remedies) is pinned for every tenth beam

GLULAM = {
    "D.Fir-L": ("20f-E", "20f-EX", "24f-E", "24f-EX"),
    "Spruce-Pine": ("20f-E", "20f-EX"),
}
GLULAM_WIDTHS = (80, 130, 175, 215, 265, 315, 365)
SAWN = {sp: ("SS", "No.1/No.2", "No.3") for sp in ("D.Fir-L", "Hem-Fir", "S-P-F", "Northern")}
SAWN_SIZES = ((38, 89), (38, 140), (38, 184), (38, 235), (38, 286), (64, 184), (64, 235), (64, 286))
SAWN_SIZES += ((89, 140), (89, 184), (89, 235), (89, 286))
RESTRAINT = ("yes", "yes", "yes", "no", "not_visible")
USES = (None, "floor", "roof_plaster", "roof_other", "roof_no_ceiling")
LE_CASES = ("auto",) * 6 + ("simple_udl", "any", "simple_point_centre", "cantilever_udl", "any_braced")


def _layout(rng: random.Random, kind: str, sawn: bool) -> dict[str, Any]:
    """Spans and overhangs for one beam kind: simple, overhang(s), continuous 2-5 spans, uplift."""
    top = 6000 if sawn else 14000
    n = 1 if kind in {"simple", "overhang", "uplift"} else rng.randint(2, 5)
    if kind == "continuous" and rng.random() < 0.5:
        spans = [rng.randrange(1200, top, 100)] * n
    else:
        spans = [rng.randrange(1200, top, 100) for _ in range(n)]
    out: dict[str, Any] = {"spans_mm": spans}
    if kind == "overhang" or (kind == "continuous" and rng.random() < 0.2):
        side = rng.choice(("left", "right", "both"))
        for s in ("left", "right"):
            if side in {s, "both"}:
                out[f"overhang_{s}_mm"] = rng.randrange(300, max(400, spans[0] // 2), 50)
    if kind == "uplift":  # a long overhang on a short back span: the far bearing lifts
        out["spans_mm"] = [rng.randrange(1500, 3000, 100)]
        out[f"overhang_{rng.choice(('left', 'right'))}_mm"] = rng.randrange(2000, 4000, 100)
    return out


def _section(rng: random.Random, sawn: bool) -> dict[str, Any]:
    if sawn:
        species = rng.choice(sorted(SAWN))
        b, d = rng.choice(SAWN_SIZES)
        return {"material": "sawn", "species": species, "grade": rng.choice(SAWN[species]), "b_mm": b, "d_mm": d}
    species = rng.choice(sorted(GLULAM))
    return {
        "material": "glulam",
        "species": species,
        "grade": rng.choice(GLULAM[species]),
        "b_mm": rng.choice(GLULAM_WIDTHS),
        "d_mm": 38 * rng.randint(4, 40),
    }


def _edges(rng: random.Random, longest: int) -> dict[str, Any]:
    out: dict[str, Any] = {}
    braced = rng.choice(("none", "purlins", "purlins", "decking"))
    top: dict[str, Any] = {"braced_by": braced}
    if braced == "purlins":
        top["spacing_mm"] = min(longest, rng.choice((400, 600, 1200, 1800, 2400, 3000, 4000)))
    if braced != "none" or rng.random() < 0.2:
        top["fastened"] = rng.choice((True, True, False, None))
    out["top_edge"] = top
    if rng.random() < 0.3:
        out["bottom_edge"] = {"braced_by": "braces", "spacing_mm": min(longest, rng.choice((400, 610, 1200, 2400)))}
    if rng.random() < 0.2:
        out["bridging_spacing_mm"] = min(longest, rng.choice((600, 1200, 2000)))
    return out


def _options(rng: random.Random, sawn: bool) -> dict[str, Any]:
    out: dict[str, Any] = {"le_case": rng.choice(LE_CASES)}
    use = rng.choice(USES)
    if use is not None:
        out["use"] = use
    if rng.random() < 0.2:
        out["service"] = "wet"
    if rng.random() < 0.15:
        out["negative_lu"] = "zero_moment_point"
    if rng.random() < 0.15:
        out["dead_load_pattern"] = "uniform"
    if rng.random() < 0.1:
        out["self_weight"] = False
    if sawn:
        if rng.random() < 0.2:
            out["treatment"] = "incised"
        system = rng.choice(("single", None, "shared", "light_frame", "built_up"))  # None: not recorded
        if system is not None:
            out["system"] = system
    else:
        out["top_stamp"] = rng.choice(("up", "up", "down", "not_visible"))
    return out


def _loads(rng: random.Random, kind: str, sawn: bool) -> dict[str, float]:
    scale = 0.3 if sawn else 0.6
    dead = round(rng.uniform(0.1, 4.0) * scale, 2)
    live = round(rng.uniform(0.5, 8.0) * scale, 2) if rng.random() < 0.55 else 0.0
    snow = round(rng.uniform(0.5, 8.0) * scale, 2) if rng.random() < 0.55 or live == 0.0 else 0.0
    if kind == "uplift":
        dead = round(rng.uniform(0.1, 0.6) * scale, 2)
    if rng.random() < 0.03:
        live = snow = 0.0  # dead load only
    return {"dead_kn_m": dead, "live_kn_m": live, "snow_kn_m": snow}


def beam_data(rng: random.Random, i: int) -> dict[str, Any]:
    """One invented beam as contract-1 JSON (it may still be refused by the model; the caller redraws)."""
    sawn = rng.random() < 0.4
    kind = rng.choice(("simple", "simple", "overhang", "continuous", "continuous", "uplift"))
    data: dict[str, Any] = {"mark": f"G-{i}", **_section(rng, sawn), **_layout(rng, kind, sawn)}
    n_supports = len(data["spans_mm"]) + 1
    seen = rng.random() < 0.3  # most beams have every bearing restrained; some show each state
    data["bearings"] = [
        {
            "lateral": rng.choice(RESTRAINT) if seen else "yes",
            "rotation": rng.choice(RESTRAINT) if seen else "yes",
            "length_mm": rng.choice((38, 89, 140, 200)),
        }
        for _ in range(n_supports)
    ]
    data.update(_edges(rng, max(data["spans_mm"])))
    data["loads"] = _loads(rng, kind, sawn)
    data.update(_options(rng, sawn))
    return data


def beams(count: int = COUNT, seed: int = SEED) -> list[Beam]:
    """`count` valid beams, the same on every run for a seed (refused draws are redrawn)."""
    rng = random.Random(seed)
    out: list[Beam] = []
    while len(out) < count:
        data = beam_data(rng, len(out))
        try:
            check_beam_json(data)
            out.append(Beam.model_validate(data))
        except ValueError:  # pydantic's ValidationError is a ValueError: an invalid draw, drawn again
            continue
    return out


def recheck_digest(beam: Beam) -> str:
    """SHA-256 of the recheck's contract-1 JSON as `bracewalk check` formats it, without the remedies."""
    text = json.dumps(recheck(beam).to_json_dict(), indent=2, allow_nan=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def check_digest(beam: Beam) -> str:
    """SHA-256 of the exact bytes `bracewalk check` prints for the beam (its JSON and the final newline)."""
    return hashlib.sha256((check_output(beam) + "\n").encode("utf-8")).hexdigest()


def digests(item: tuple[int, Beam]) -> tuple[str, str]:
    """(recheck digest, whole-output digest or '-') of the beam at an index."""
    i, beam = item
    return recheck_digest(beam), check_digest(beam) if i % FULL_EVERY == 0 else "-"


def read_golden() -> list[tuple[str, str]]:
    """The stored digests, in beam order: (recheck, whole output)."""
    rows = [line.split() for line in GOLDEN.read_text(encoding="utf-8").splitlines()]
    return [(r[1], r[2]) for r in rows]


def versions() -> dict[int, str]:
    """The ledger: results version -> SHA-256 of the golden file written under it."""
    rows = [line.split() for line in VERSIONS.read_text(encoding="utf-8").splitlines() if line.strip()]
    return {int(r[0]): r[1] for r in rows}


def write(got: list[tuple[str, str]]) -> int:
    """Write the golden file, refusing new output under a results version that already has other output."""
    from core.results import RESULTS_VERSION

    text = "".join(f"{i} {a} {b}\n" for i, (a, b) in enumerate(got))
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    held = versions()
    if held.get(RESULTS_VERSION, sha) != sha:
        print(
            f"the recheck's output changed under results version {RESULTS_VERSION}: bump "
            "core.results.RESULTS_VERSION (stored results are then recomputed) and write again"
        )
        return 1
    GOLDEN.write_text(text, encoding="utf-8")
    if RESULTS_VERSION not in held:
        with VERSIONS.open("a", encoding="utf-8") as f:
            f.write(f"{RESULTS_VERSION} {sha}\n")
    print(f"wrote {len(got)} digests to {GOLDEN} (results version {RESULTS_VERSION})")
    return 0


def main(argv: list[str] | None = None) -> int:
    """Write the golden file (`--write`) or compare every beam with it."""
    ap = argparse.ArgumentParser(prog="python -m tests.core.golden")
    ap.add_argument("--write", action="store_true")
    ap.add_argument("--count", type=int, default=COUNT)
    ap.add_argument("--processes", type=int, default=1)
    args = ap.parse_args(argv)
    with multiprocessing.Pool(args.processes) as pool:
        got = pool.map(digests, enumerate(beams(args.count)), chunksize=50)
    if args.write:
        return write(got)
    want = read_golden()
    bad = [i for i, (a, b) in enumerate(zip(got, want, strict=False)) if a != b]  # both digests of a beam
    print(f"{len(got)} beams, {len(bad)} differ: {bad[:20]}")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
