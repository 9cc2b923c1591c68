"""The README's command table against each command's --help, and the CHANGELOG's versions and dates."""

import argparse
import re
import tomllib
from pathlib import Path

import pytest

from mobile.cli import build_parser

ROOT = Path(__file__).resolve().parents[1]


def table_commands() -> list[str]:
    """Every `bracewalk ...` code span in the first column of the README's command table."""
    text = (ROOT / "README.md").read_text()
    table = text[text.index("| command | what it does |") :].split("\n\n", 1)[0]
    firsts = [row.split(" | ", 1)[0] for row in table.splitlines()[2:]]
    return [span for cell in firsts for span in re.findall(r"`(bracewalk[^`]*)`", cell)]


def path_and_options(command: str) -> tuple[list[str], list[str]]:
    """('bracewalk hub user add --db X --name N') -> (['hub', 'user', 'add'], ['--db', '--name'])."""
    words = command.replace("\\|", "|").split()[1:]
    path = []
    for w in words:
        if not re.fullmatch(r"[a-z]+", w):
            break
        path.append(w)
    return path, re.findall(r"--[a-z][a-z-]*", command)


def help_text(path: list[str], capsys) -> str:
    with pytest.raises(SystemExit) as stop:
        build_parser().parse_args([*path, "--help"])
    out = capsys.readouterr()
    assert stop.value.code == 0, f"bracewalk {' '.join(path)} --help: {out.err}"
    return out.out


def test_the_table_lists_the_commands():
    commands = table_commands()
    assert len(commands) >= 18, commands
    assert "bracewalk" in commands
    assert "bracewalk check BEAM.json [--text] [--sheet FILE.pdf]" in commands


@pytest.mark.parametrize("command", table_commands())
def test_table_command_exists_with_its_options(command, capsys):
    path, options = path_and_options(command)
    text = help_text(path, capsys)
    assert text.startswith(f"usage: {' '.join(['bracewalk', *path])}"), text[:200]
    missing = [o for o in options if not re.search(rf"{re.escape(o)}\b", text)]
    assert not missing, f"{command}: {missing} not in its --help"


def parser_commands(parser: argparse.ArgumentParser, path: tuple[str, ...] = ()) -> list[tuple[str, ...]]:
    """Every leaf command of the argument parser, as its words: ('hub', 'user', 'add')."""
    subs = [a for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
    if not subs:
        return [path]
    return [leaf for a in subs for name, sub in a.choices.items() for leaf in parser_commands(sub, (*path, name))]


def test_every_command_of_the_parser_is_in_the_table():
    listed = {tuple(path_and_options(c)[0]) for c in table_commands()}
    every = parser_commands(build_parser())
    assert len(every) >= 20, every
    assert [" ".join(c) for c in every if c not in listed] == []


def changelog_headings() -> list[str]:
    return re.findall(r"^## (.+)$", (ROOT / "CHANGELOG.md").read_text(), flags=re.M)


def test_changelog_has_versions_and_dates_newest_first():
    released = []
    for heading in changelog_headings():
        if heading == "Unreleased":
            assert not released, "Unreleased goes at the top"
            continue
        m = re.fullmatch(r"(\d+)\.(\d+)\.(\d+) - (\d{4}-\d\d-\d\d)( \(.+\))?", heading)
        assert m, f"heading {heading!r}: want 'X.Y.Z - YYYY-MM-DD (what)'"
        released.append(((int(m[1]), int(m[2]), int(m[3])), m[4]))
    assert len(released) >= 2
    versions, dates = [v for v, _ in released], [d for _, d in released]
    assert versions == sorted(versions, reverse=True)
    assert len(set(versions)) == len(versions)
    assert dates == sorted(dates, reverse=True)
    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["version"]
    assert project == ".".join(map(str, versions[0])), "pyproject's version is the newest released one"
