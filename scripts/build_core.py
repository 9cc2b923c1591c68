"""Compile the recheck's hot modules of `core` with mypyc (mypy's compiler), or remove the compiled ones.

    .venv/bin/python scripts/build_core.py          # compile (scripts/setup.sh runs this)
    .venv/bin/python scripts/build_core.py --clean  # remove every compiled module: core runs from source

The same Python source, compiled to C extension modules placed beside it (``core/**/*.so``, with the group's
shared ``core/native__mypyc*.so``), and ``core/compiled.json``: the SHA-256 of
every source compiled. On import, ``core`` compares the sources with it (``core/__init__.py``): if any
changed since the build, or a compiled module is not listed, every ``core`` module is loaded from its source
instead (a warning says so), never a mix. The output is the same either way: the golden digests
(tests/core/test_golden.py) are held by both builds in CI.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
GROUP = "core.native"  # the shared library core/native__mypyc*.so: inside the package, found as core is
# the modules of a recheck's hot path: pure arithmetic and plain classes (models and tables stay Python)
MODULES = (
    "core/analysis.py",
    "core/assembled.py",
    "core/edges.py",
    "core/effective_length.py",
    "core/findings.py",
    "core/governing.py",
    "core/loads.py",
    "core/member.py",
    *(
        f"core/clauses/{n}.py"
        for n in ("bearing", "bending", "factors", "outcomes", "serviceability", "shear", "stability")
    ),
    *(f"core/recheck/{n}.py" for n in ("__init__", "bearing", "bending", "cases", "deflection", "shear", "trace")),
)
MANIFEST = ROOT / "core" / "compiled.json"
SETUP = (
    "import sys\n"
    "from setuptools import setup\n"
    "from mypyc.build import mypycify\n"
    "modules, group, target = sys.argv[1].split(','), sys.argv[2], sys.argv[3]\n"
    "setup(name='bracewalk-core-compiled', script_args=sys.argv[4:],\n"
    "      ext_modules=mypycify(modules, opt_level='3', strip_asserts=False, group_name=group, target_dir=target))\n"
)


def compiled_files() -> list[Path]:
    """Every compiled module of core, and the group's shared library."""
    return sorted(ROOT.glob("core/**/*.so"))


def clean() -> int:
    """Remove every compiled module and the manifest: core runs from source."""
    for path in compiled_files():
        path.unlink()
    MANIFEST.unlink(missing_ok=True)
    return len(compiled_files())


def build() -> None:
    """Compile MODULES in place (C sources and objects in a temporary folder), then write the manifest."""
    clean()
    with tempfile.TemporaryDirectory(prefix="bracewalk-mypyc-") as tmp:
        cmd = [sys.executable, "-c", SETUP, ",".join(MODULES), GROUP, str(Path(tmp) / "c")]
        cmd += ["build_ext", "--inplace", "--build-temp", str(Path(tmp) / "obj"), "--build-lib", str(Path(tmp) / "lib")]
        done = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, check=False)
        if done.returncode != 0:
            clean()
            tail = "\n".join((done.stdout + done.stderr).splitlines()[-20:])
            msg = f"mypyc build failed (core runs from source):\n{tail}"
            raise SystemExit(msg)
    sources = {m: hashlib.sha256((ROOT / m).read_bytes()).hexdigest() for m in MODULES}
    built = [str(p.relative_to(ROOT)) for p in compiled_files()]
    MANIFEST.write_text(json.dumps({"sources": sources, "compiled": built}, indent=1) + "\n", encoding="utf-8")
    print(f"compiled {len(MODULES)} core modules ({len(built)} files); manifest {MANIFEST.relative_to(ROOT)}")


def main(argv: list[str] | None = None) -> int:
    """Compile, or with --clean remove the compiled modules."""
    ap = argparse.ArgumentParser(prog="scripts/build_core.py", description=__doc__.splitlines()[0])
    ap.add_argument("--clean", action="store_true", help="remove the compiled modules: core runs from source")
    args = ap.parse_args(argv)
    if args.clean:
        left = clean()
        print("core runs from source" if not left else f"{left} compiled files could not be removed")
        return 1 if left else 0
    build()
    return 0


if __name__ == "__main__":
    sys.exit(main())
