"""The pre-commit hooks run exactly the checks .ci/run runs (ruff check, ruff format --check, mypy)."""

import re
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
    assert sorted(hook_entries()) == sorted(ci_checks())


def test_pre_commit_hooks_are_local_and_use_the_venv():
    text = (ROOT / ".pre-commit-config.yaml").read_text()
    assert re.findall(r"^\s*-\s*repo:\s*(\S+)", text, flags=re.M) == ["local"]
    assert text.count("language: system") == len(hook_entries()) == 3
