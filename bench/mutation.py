"""Mutation run over ``core`` with mutmut: how many planted changes the core tests catch.

`python -m bench --only mutation` (or `python -m bench.mutation [--rest N] [--keep]`). Not part of
the test suite and not in the default bench run: it takes minutes to tens of minutes on 2 cores.

The project's ``core`` package, ``tests/core`` and ``tests/validation`` are copied to a temporary
folder with a minimal pyproject that configures mutmut, so the worktree gets no ``mutants/`` folder
and the packages outside ``core`` are neither mutated nor imported. Two runs:

1. ``core/clauses``: every mutant (the aim is 0 survivors).
2. the rest of ``core``: its top-level modules and every subpackage but ``core/clauses`` (so
   ``core/recheck/``, which holds about 2,000 of the 5,400 mutants), every mutant when ``--rest
   all``, otherwise a fixed sample of N mutants (every k-th name in sorted order, so the same N on
   every run with the same code; the aim is below 10 % survivors). The default N = 400 (about 10-13
   minutes on 2 shared cores, a 95 % margin of about +-3 points at 10 %); the full rest takes hours.

The hypothesis property tests (``tests/core/test_properties.py``) are left out of the mutation
runs: they check invariants, not numbers, and with hundreds of examples each they dominate the time.
Leaving them out can only raise the survivor count, never hide a survivor.

"survived" = the tests passed with the mutant in place; "no tests" = no selected test ran the
mutated function; "timeout" = the mutant made the tests hang (counted as caught).
"""

from __future__ import annotations

import argparse
import re
import shutil
import subprocess
import sys
import tempfile
import time
from collections import Counter
from pathlib import Path

from bench.common import Row

ROOT = Path(__file__).resolve().parents[1]
MUTMUT = str(Path(sys.executable).with_name("mutmut"))
SKIP_TESTS = ("tests/core/test_properties.py",)
RESULT_LINE = re.compile(r"^\s+(\S+__mutmut_\d+): (.+)$")

PYPROJECT = """\
[tool.pytest.ini_options]
testpaths = ["tests"]
addopts = "-p no:cacheprovider"
filterwarnings = ["error"]
markers = ["slow: end-to-end", "ui: app under Xvfb"]

[tool.mutmut]
source_paths = ["core"]
only_mutate = {only}
pytest_add_cli_args_test_selection = ["tests/core/", "tests/validation/"]
pytest_add_cli_args = ["-m", "not slow", "-q", {ignores}]
also_copy = ["README.md", "tests/"]
"""


def _workspace(only: list[str], root: Path) -> Path:
    """A temporary copy of core and its tests with a pyproject that configures mutmut."""
    work = Path(tempfile.mkdtemp(prefix="bracewalk-mutation-"))
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc")
    shutil.copytree(root / "core", work / "core", ignore=ignore)
    for sub in ("core", "validation"):
        shutil.copytree(root / "tests" / sub, work / "tests" / sub, ignore=ignore)
    (work / "tests" / "__init__.py").write_text("")
    shutil.copy(root / "README.md", work / "README.md")  # tests/core/test_models.py reads it
    ignores = ", ".join(f'"--ignore={p}"' for p in SKIP_TESTS)
    only_toml = "[" + ", ".join(f'"{p}"' for p in only) + "]"
    (work / "pyproject.toml").write_text(PYPROJECT.format(only=only_toml, ignores=ignores))
    return work


def _mutmut(work: Path, *args: str, fail_ok: bool = False) -> str:
    done = subprocess.run([MUTMUT, *args], cwd=work, capture_output=True, text=True, check=False)
    if done.returncode != 0 and not fail_ok:
        msg = f"mutmut {' '.join(args[:2])} exited {done.returncode}: {done.stderr[-500:]}"
        raise RuntimeError(msg)
    return done.stdout


def results(work: Path) -> dict[str, str]:
    """Status of every mutant mutmut has generated in ``work`` (name -> status)."""
    out = {}
    for line in _mutmut(work, "results", "--all", "true").splitlines():
        m = RESULT_LINE.match(line)
        if m:
            out[m.group(1)] = m.group(2).strip()
    return out


def mutate(only: list[str], sample: int | None = None, keep: bool = False, root: Path = ROOT) -> dict[str, str]:
    """Run mutmut over the files matching ``only`` (globs); all mutants, or a fixed sample of that many."""
    work = _workspace(only, root)
    try:
        names: list[str] = []
        if sample is not None:
            # generate the mutants without running them: mutmut refuses the filter that matches nothing
            # after it has written every mutant ("results" then lists them all as not checked)
            _mutmut(work, "run", "--max-children", "2", "__no_such_mutant__", fail_ok=True)
            every = sorted(results(work))
            step = max(1, len(every) // sample) if sample else len(every) + 1
            names = every[::step][:sample]
            if not names:
                return {}
        _mutmut(work, "run", "--max-children", "2", *names)
        status = results(work)
        return {n: status[n] for n in names} if names else status
    finally:
        if keep:
            print(f"mutmut workspace kept in {work}", file=sys.stderr)
        else:
            shutil.rmtree(work, ignore_errors=True)


def _row(what: str, status: dict[str, str], aim_pct: float) -> Row:
    counts = Counter(status.values())
    total = len(status)
    survived = counts["survived"] + counts["no tests"]
    pct = 100.0 * survived / total if total else 0.0
    figure = f"{total - survived}/{total} caught, {survived} survived ({pct:.1f} %)"
    aim = "0 survivors" if aim_pct == 0 else f"< {aim_pct:g} % survivors"
    return Row(what, figure, "", "", aim, pct <= aim_pct if aim_pct == 0 else pct < aim_pct)


def _print_survivors(status: dict[str, str]) -> None:
    for name, s in sorted(status.items()):
        if s in ("survived", "no tests"):
            print(f"  {s}: {name}", file=sys.stderr)


def _rest_of_core(root: Path) -> list[str]:
    """Globs for every module of core outside core/clauses: the top-level files and each subpackage."""
    top = [f"core/{p.name}" for p in sorted((root / "core").glob("*.py")) if p.name != "__init__.py"]
    subs = [f"core/{d.name}/*" for d in sorted((root / "core").iterdir()) if (d / "__init__.py").is_file()]
    return top + [s for s in subs if s != "core/clauses/*"]


def run(quick: bool = False, rest: str = "400", keep: bool = False, root: Path = ROOT) -> list[Row]:
    """Mutation scores of core/clauses (all mutants) and of the rest of core (sampled unless rest='all')."""
    t0 = time.perf_counter()
    clauses = mutate(["core/clauses/*"], keep=keep, root=root)
    _print_survivors(clauses)
    rows = [_row(f"mutation: core/clauses, all mutants ({time.perf_counter() - t0:.0f} s)", clauses, 0.0)]
    if quick:
        return rows
    t1 = time.perf_counter()
    others = _rest_of_core(root)
    sample = None if rest == "all" else int(rest)
    status = mutate(others, sample=sample, keep=keep, root=root)
    _print_survivors(status)
    how = "all mutants" if sample is None else f"sample of {len(status)} (every k-th name)"
    rows.append(_row(f"mutation: rest of core, {how} ({time.perf_counter() - t1:.0f} s)", status, 10.0))
    return rows


def main(argv: list[str] | None = None) -> int:
    """Run the mutation bench alone and print its rows."""
    from bench.common import print_table

    ap = argparse.ArgumentParser(prog="python -m bench.mutation", description=__doc__)
    ap.add_argument("--quick", action="store_true", help="core/clauses only")
    ap.add_argument("--rest", default="400", help="mutants sampled from the rest of core, or 'all' (default 400)")
    ap.add_argument("--keep", action="store_true", help="keep the temporary mutmut folders (to inspect survivors)")
    ap.add_argument("--root", type=Path, default=ROOT, help="another checkout to measure (e.g. an older commit)")
    args = ap.parse_args(argv)
    print_table(run(quick=args.quick, rest=args.rest, keep=args.keep, root=args.root))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
