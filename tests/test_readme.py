"""The README stays true: its provenance table is the data files', and its two commands are the CI's."""

from pathlib import Path

from core.provenance import provenance_rows

ROOT = Path(__file__).resolve().parents[1]


def test_provenance_table_matches_data_files():
    text = (ROOT / "README.md").read_text()
    block = text.split("<!-- provenance:start -->\n")[1].split("<!-- provenance:end -->")[0]
    assert block.strip().splitlines() == provenance_rows()


def test_readme_commands_are_the_ci_commands():
    readme = (ROOT / "README.md").read_text()
    ci = (ROOT / ".ci" / "run").read_text()
    assert "bash scripts/setup.sh && .venv/bin/bracewalk demo --out demo-out" in readme
    assert "bash scripts/setup.sh && .venv/bin/python -m pytest -q" in readme
    assert "bash scripts/setup.sh" in ci
    assert ".venv/bin/python -m pytest -q" in ci
    assert ".venv/bin/bracewalk demo" in ci
