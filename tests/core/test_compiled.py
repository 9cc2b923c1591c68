"""Compiled or source (core.compiled): the compiled modules run only while built from the sources as they are.

Python loads a compiled extension before a module's .py, even after the .py was edited (the import system's
documented finder order: extension suffixes first); compiled modules call each other directly, so a stale
build would run old arithmetic unseen. Any change sends every core module to its source.
"""

import hashlib
import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

import core.compiled as compiled

ROOT = Path(__file__).resolve().parents[2]
PROBE = "import sys, core, core.compiled as c; print('compiled' if c.running_compiled() else 'source')"


@pytest.fixture
def package(tmp_path, monkeypatch):
    """A stand-in package folder with one source, for stale_reason."""
    pkg = tmp_path / "core"
    pkg.mkdir()
    (pkg / "a.py").write_text("X = 1\n", encoding="utf-8")
    monkeypatch.setattr(compiled, "PACKAGE", pkg)
    monkeypatch.setattr(compiled, "MANIFEST", pkg / "compiled.json")
    return pkg


def _manifest(pkg, compiled_files):
    sources = {"core/a.py": hashlib.sha256((pkg / "a.py").read_bytes()).hexdigest()}
    (pkg / "compiled.json").write_text(json.dumps({"sources": sources, "compiled": compiled_files}), encoding="utf-8")


def test_no_compiled_module_means_nothing_to_check(package):
    assert not list(package.rglob("*.so"))
    assert compiled.stale_reason() == ""


def test_a_compiled_module_without_its_manifest_is_stale(package):
    (package / "a.cpython-311-x86_64-linux-gnu.so").write_bytes(b"\x7fELF")
    assert compiled.stale_reason() == "compiled.json is missing"


def test_a_build_matching_its_sources_runs_and_any_edit_stops_it(package):
    (package / "a.cpython-311-x86_64-linux-gnu.so").write_bytes(b"\x7fELF")
    _manifest(package, ["core/a.cpython-311-x86_64-linux-gnu.so"])
    assert compiled.stale_reason() == ""
    (package / "a.py").write_text("X = 2\n", encoding="utf-8")
    assert compiled.stale_reason() == "core/a.py changed since it was compiled"


def test_a_compiled_file_not_from_the_last_build_is_stale(package):
    _manifest(package, [])
    (package / "b.cpython-311-x86_64-linux-gnu.so").write_bytes(b"\x7fELF")
    assert compiled.stale_reason() == "b.cpython-311-x86_64-linux-gnu.so is not from the last build"


def _run(cwd, env_extra=None):
    env = {k: v for k, v in os.environ.items() if k != compiled.SOURCE_ONLY_ENV} | (env_extra or {})
    env["PYTHONPATH"] = str(cwd)
    done = subprocess.run([sys.executable, "-c", PROBE], cwd=cwd, env=env, capture_output=True, text=True, check=True)
    return done.stdout.strip(), done.stderr


@pytest.mark.skipif(
    not os.environ.get("BRACEWALK_EXPECT_COMPILED") or bool(os.environ.get(compiled.SOURCE_ONLY_ENV)),
    reason="only where setup.sh must compile (.ci/run), and not in the run from source",
)
def test_setup_compiled_core():
    """CI's machine has a C compiler and Python's headers (setup.sh installs them): the build must be there."""
    assert compiled.stale_reason() == ""
    assert compiled.running_compiled()


def test_asked_for_source_core_runs_from_source():
    assert _run(ROOT, {compiled.SOURCE_ONLY_ENV: "1"}) == ("source", "")


built = pytest.mark.skipif(
    not compiled.MANIFEST.is_file() or compiled.stale_reason() != "",
    reason="no fresh compiled build here (scripts/build_core.py; .ci/run checks that setup.sh made one)",
)


@built
def test_the_fresh_build_runs_compiled():
    assert _run(ROOT) == ("compiled", "")


@built
def test_the_installed_package_runs_compiled_from_anywhere(tmp_path):
    """As the console script runs it: another folder, no PYTHONPATH (the editable install finds core alone).

    Every compiled file, the group's shared library too, lives inside the package: one at the top of the
    repository was not found there (ModuleNotFoundError), so the installed app could not start.
    """
    env = {k: v for k, v in os.environ.items() if k not in (compiled.SOURCE_ONLY_ENV, "PYTHONPATH")}
    done = subprocess.run([sys.executable, "-c", PROBE], cwd=tmp_path, env=env, capture_output=True, text=True)
    assert (done.returncode, done.stdout.strip()) == (0, "compiled"), done.stderr[-2000:]


@built
def test_an_edited_source_sends_every_core_module_to_its_source(tmp_path):
    """A copy of the compiled tree with one source edited: core loads from source and says why."""
    shutil.copytree(ROOT / "core", tmp_path / "core", ignore=shutil.ignore_patterns("__pycache__"))
    with (tmp_path / "core" / "edges.py").open("a", encoding="utf-8") as f:
        f.write("# edited after the build\n")
    out, err = _run(tmp_path)
    assert out == "source"
    assert "core/edges.py changed since it was compiled" in err
