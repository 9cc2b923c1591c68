"""The README's two set-up commands, run literally in a fresh copy of the project (a fresh .venv).

Slow (it builds a virtual environment and runs the whole suite once more), so it is marked slow;
`.ci/run` runs the full suite, this test included. Inside the nested run it skips itself, and so do the
other slow tests (tests/conftest.py): the outer run has run them.
"""

import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
NESTED = "BRACEWALK_README_NESTED"


def readme_commands() -> list[str]:
    """The code blocks that follow the README's first paragraph: the demo command, then the tests."""
    blocks = re.findall(r"```\n(.*?)\n```", (ROOT / "README.md").read_text(), flags=re.S)
    return [b.strip() for b in blocks[:2]]


def fresh_copy(dest: Path) -> Path:
    """The project's files as a clean checkout would have them (tracked and new, not ignored; no .venv)."""
    files = (
        subprocess.run(
            ["git", "ls-files", "-co", "--exclude-standard", "-z"], cwd=ROOT, check=True, capture_output=True
        )
        .stdout.decode()
        .split("\0")
    )
    for name in filter(None, files):
        src = ROOT / name
        if src.is_file():
            (dest / name).parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(src, dest / name)
    return dest


@pytest.mark.slow
@pytest.mark.skipif(os.environ.get(NESTED) == "1", reason="this is the nested run of the README's test command")
@pytest.mark.skipif(shutil.which("git") is None, reason="needs git to list the project's files")
def test_readme_commands_work_literally_in_a_fresh_venv(tmp_path):
    demo_cmd, test_cmd = readme_commands()
    assert demo_cmd.startswith("bash scripts/setup.sh")
    assert test_cmd.startswith("bash scripts/setup.sh")
    project = fresh_copy(tmp_path / "bracewalk")
    assert not (project / ".venv").exists()
    env = dict(os.environ, **{NESTED: "1"})
    env.pop("VIRTUAL_ENV", None)
    demo = subprocess.run(["bash", "-c", demo_cmd], cwd=project, env=env, capture_output=True, text=True, timeout=1800)
    assert demo.returncode == 0, demo.stdout[-3000:] + demo.stderr[-3000:]
    assert (project / ".venv" / "bin" / "bracewalk").exists()
    out = project / "demo-out"
    assert list(out.glob("*.pdf"))
    assert list(out.glob("*.bwsync"))
    assert list(out.glob("*.db"))
    assert "RB-5" in demo.stdout  # the demo table lists every beam
    tests = subprocess.run(["bash", "-c", test_cmd], cwd=project, env=env, capture_output=True, text=True, timeout=3600)
    assert tests.returncode == 0, tests.stdout[-5000:] + tests.stderr[-3000:]
    assert re.search(r"\d+ passed", tests.stdout), tests.stdout[-2000:]
    assert re.search(r"\d+ skipped", tests.stdout), tests.stdout[-2000:]  # the slow ones, run by the outer run
