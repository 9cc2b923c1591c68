"""The ``bracewalk`` command line (contract 2). Headless commands never import Kivy."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

from pydantic import ValidationError

from mobile.errors import EXIT_BAD_INPUT, EXIT_FAILURE, EXIT_OK, UserError

__all__ = ["EXIT_BAD_INPUT", "EXIT_FAILURE", "EXIT_OK", "UserError", "main"]


def _format_validation(err: ValidationError) -> str:
    lines = []
    for e in err.errors():
        loc = ".".join(str(p) for p in e["loc"]) or "(beam)"
        value = e.get("input")
        shown = json.dumps(value)[:80] if not isinstance(value, dict) else "{...}"
        lines.append(f"{loc}: {e['msg']} (got {shown})")
    return "invalid beam: " + "; ".join(lines)


def load_beam(path: str) -> Any:
    """Read and validate a beam JSON file; raise UserError naming the field on bad input."""
    from core.models import Beam
    from mobile.units import check_beam_json

    try:
        text = sys.stdin.read() if path == "-" else Path(path).read_text(encoding="utf-8")
    except OSError as exc:
        raise UserError(f"cannot read {path}: {exc.strerror}") from exc
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise UserError(f"{path} is not valid JSON: {exc.msg} at line {exc.lineno}") from exc
    try:
        check_beam_json(data)  # plausible ranges, the same as the tablet's form (mobile/units.py)
    except ValueError as exc:
        raise UserError(f"invalid beam: {exc}") from exc
    try:
        return Beam.model_validate(data)
    except ValidationError as exc:
        raise UserError(_format_validation(exc)) from exc


def cmd_check(args: argparse.Namespace) -> int:
    """Recheck one beam and print contract-1 JSON (or a readable summary with --text)."""
    from core.recheck import recheck
    from core.remedies import remedies
    from mobile.text import recheck_text

    beam = load_beam(args.beam)
    result = recheck(beam)
    if args.text:
        print(recheck_text(result))
    else:
        data = result.to_json_dict()
        data["remedies"] = [r.model_dump(mode="json", exclude_none=True) for r in remedies(beam, result)]
        print(json.dumps(data, indent=2))
    return EXIT_OK


def cmd_schema(args: argparse.Namespace) -> int:
    """Print the JSON Schema of the beam input."""
    from core.models import Beam

    print(json.dumps(Beam.model_json_schema(), indent=2))
    return EXIT_OK


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every subcommand."""
    parser = argparse.ArgumentParser(
        prog="bracewalk",
        description="Field review of installed timber beams: CSA O86 recheck, deficiency notices, sync. "
        "With no command, opens the tablet app.",
        epilog="Results are advisory: they support, never replace, the engineer of record's judgement.",
    )
    sub = parser.add_subparsers(dest="command")
    p = sub.add_parser("check", help="recheck one beam described in a JSON file (contract 1)")
    p.add_argument("beam", help="path to the beam JSON file, or - for standard input")
    p.add_argument("--text", action="store_true", help="print a readable summary instead of JSON")
    p.set_defaults(func=cmd_check)
    p = sub.add_parser("schema", help="print the JSON Schema of the beam input")
    p.set_defaults(func=cmd_schema)
    _add_more(sub)
    return parser


def _add_more(sub: Any) -> None:
    """Commands that live in their own modules (demo, report, sync, app)."""
    from mobile import commands, hub_commands

    commands.register(sub)
    hub_commands.register(sub)


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``bracewalk`` console script."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        from mobile.commands import cmd_app

        return cmd_app(args)
    try:
        return int(args.func(args))
    except UserError as exc:
        print(f"bracewalk {args.command}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT


if __name__ == "__main__":
    raise SystemExit(main())
