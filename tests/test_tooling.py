"""The pre-commit hooks run exactly what .ci/run runs.

ruff check, ruff format --check and mypy before each commit; those, the tests and the demo before each push.
"""

import re
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def ci_checks() -> list[str]:
    """The lint and type-check lines of .ci/run: every line that calls the venv's ruff or mypy."""
    lines = (ROOT / ".ci" / "run").read_text().splitlines()
    return [line.strip() for line in lines if re.match(r"\s*\.venv/bin/(ruff|mypy)\b", line)]


def hook_entries() -> list[str]:
    """The `entry:` commands of .pre-commit-config.yaml."""
    text = (ROOT / ".pre-commit-config.yaml").read_text()
    return [m.strip() for m in re.findall(r"^\s*entry:\s*(.+)$", text, flags=re.M)]


def test_ci_runs_ruff_check_ruff_format_and_mypy():
    checks = ci_checks()
    assert any(c.startswith(".venv/bin/ruff check") for c in checks), checks
    assert any(c.startswith(".venv/bin/ruff format --check") for c in checks), checks
    assert ".venv/bin/mypy" in checks, checks


def test_pre_commit_hooks_are_the_ci_checks():
    checks = ci_checks()
    assert sorted(e for e in hook_entries() if e in checks) == sorted(checks)


def _same_command(line: str) -> str:
    """A command with its throw-away output folder and any ``bash -c '...'`` wrapper taken off."""
    line = re.sub(r"^bash -c '(.*)'$", r"\1", line.strip())
    return re.sub(r'"\$(out|\(mktemp -d\))/demo-out"', "DIR", line)


def test_pre_commit_runs_every_command_of_ci():
    # every .venv command of .ci/run (lint, types, the README's test and demo commands, core's tests from
    # source), with the environment it is given on its line, is a hook
    lines = (ROOT / ".ci" / "run").read_text().splitlines()
    ci = sorted(_same_command(x) for x in lines if re.match(r"\s*([A-Z_]+=\S+\s+)*\.venv/bin/", x))
    assert len(ci) == 6, ci
    assert sorted(_same_command(e) for e in hook_entries()) == ci


def test_pre_commit_hooks_are_local_and_use_the_venv():
    text = (ROOT / ".pre-commit-config.yaml").read_text()
    assert re.findall(r"^\s*-\s*repo:\s*(\S+)", text, flags=re.M) == ["local"]
    assert text.count("language: system") == len(hook_entries()) == 6
    assert re.search(r"^default_install_hook_types: \[pre-commit, pre-push\]$", text, flags=re.M)
    assert text.count("stages: [pre-push]") == 3  # the tests (both builds) and the demo: minutes, before each push


def test_mypy_checks_every_package_with_the_pydantic_plugin():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["mypy"]
    packages = {p.parent.name for p in ROOT.glob("*/__init__.py")} - {"tests"}
    assert sorted(config["packages"]) == sorted(packages)
    assert "pydantic.mypy" in config["plugins"]
