"""The ``bracewalk`` command line (contract 2). Headless commands never import Kivy."""

from __future__ import annotations

import argparse
import json
import os
import sqlite3
import sys
from pathlib import Path
from typing import TYPE_CHECKING, Any

from pydantic import ValidationError

from mobile.errors import EXIT_BAD_INPUT, EXIT_FAILURE, EXIT_OK, UserError

if TYPE_CHECKING:
    from core.models import Beam

__all__ = ["EXIT_BAD_INPUT", "EXIT_FAILURE", "EXIT_OK", "UserError", "main"]


def _format_validation(err: ValidationError) -> str:
    lines = []
    for e in err.errors():
        loc = ".".join(str(p) for p in e["loc"]) or "(beam)"
        value = e.get("input")
        shown = json.dumps(value)[:80] if not isinstance(value, dict) else "{...}"
        lines.append(f"{loc}: {e['msg']} (got {shown})")
    return "invalid beam: " + "; ".join(lines)


MAX_INPUT_BYTES = 1_000_000  # a beam file is a few kB; anything near this is not a beam
MAX_INT_DIGITS = 30  # no field of a beam needs more (Python refuses past 4,300 with a traceback)
BOMS = (("utf-8-sig", b"\xef\xbb\xbf"), ("utf-32", b"\xff\xfe\x00\x00"), ("utf-32", b"\x00\x00\xfe\xff"))
BOMS16 = (("utf-16", b"\xff\xfe"), ("utf-16", b"\xfe\xff"))


def read_input(path: str) -> bytes:
    """The bytes of a file (or standard input with "-"), refusing more than MAX_INPUT_BYTES."""
    try:
        if path == "-":
            raw = sys.stdin.buffer.read(MAX_INPUT_BYTES + 1)
        else:
            if Path(path).is_dir():
                msg = f"{path} is a folder, not a beam file"
                raise UserError(msg)
            with open(path, "rb") as fh:
                raw = fh.read(MAX_INPUT_BYTES + 1)
    except OSError as exc:
        msg = f"cannot read {path}: {exc.strerror}"
        raise UserError(msg) from exc
    if len(raw) > MAX_INPUT_BYTES:
        msg = f"{path} is larger than {MAX_INPUT_BYTES:,} bytes; a beam file is a few kB"
        raise UserError(msg)
    return raw


def decode_input(raw: bytes, path: str) -> str:
    """Text of a beam file: UTF-8 (with or without a byte-order mark), UTF-16/32 with a mark, else Latin-1 (said)."""
    for encoding, mark in (*BOMS, *BOMS16):
        if raw.startswith(mark):
            try:
                return raw.decode(encoding)
            except UnicodeDecodeError as exc:
                msg = f"{path}: starts with a {encoding} byte-order mark but is not {encoding}"
                raise UserError(msg) from exc
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError:
        print(f"bracewalk: note: {path} is not UTF-8; read as Latin-1 (ISO 8859-1)", file=sys.stderr)
        return raw.decode("latin-1")


def _refuse_constant(name: str) -> Any:
    msg = f"{name} is not a number a beam can have (JSON allows only finite numbers)"
    raise UserError(msg)


def _bounded_int(text: str) -> int:
    if len(text.lstrip("-")) > MAX_INT_DIGITS:
        msg = f"an integer of {len(text)} digits; no beam field needs more than {MAX_INT_DIGITS}"
        raise UserError(msg)
    return int(text)


def parse_json(text: str, path: str) -> Any:
    """JSON with NaN/Infinity, huge integers and runaway nesting refused as user errors."""
    try:
        return json.loads(text, parse_constant=_refuse_constant, parse_int=_bounded_int)
    except json.JSONDecodeError as exc:
        msg = f"{path} is not valid JSON: {exc.msg} at line {exc.lineno}"
        raise UserError(msg) from exc
    except RecursionError as exc:
        msg = f"{path}: JSON nested too deeply to be a beam"
        raise UserError(msg) from exc


def load_beam(path: str) -> Any:
    """Read and validate a beam JSON file; raise UserError naming the field on bad input."""
    from core.models import Beam
    from mobile.units import check_beam_json

    data = parse_json(decode_input(read_input(path), path), path)
    try:
        check_beam_json(data)  # plausible ranges, the same as the tablet's form (mobile/units.py)
    except ValueError as exc:
        msg = f"invalid beam: {exc}"
        raise UserError(msg) from exc
    try:
        return Beam.model_validate(data)
    except ValidationError as exc:
        raise UserError(_format_validation(exc)) from exc
    except RecursionError as exc:
        msg = f"{path}: JSON nested too deeply to be a beam"
        raise UserError(msg) from exc


def check_output(beam: Beam) -> str:
    """The contract-1 JSON `bracewalk check` prints for a beam: the recheck and its remedies.

    Raises ValueError when a value is not finite (a defect of the recheck, never printed).
    """
    from core.recheck import recheck
    from core.remedies import remedies

    result = recheck(beam)
    data = result.to_json_dict()
    data["remedies"] = [r.model_dump(mode="json", exclude_none=True) for r in remedies(beam, result)]
    return json.dumps(data, indent=2, allow_nan=False)


def cmd_check(args: argparse.Namespace) -> int:
    """Recheck one beam and print contract-1 JSON (or a readable summary with --text)."""
    from core.recheck import recheck
    from mobile.text import recheck_text

    beam = load_beam(args.beam)
    if args.sheet:
        write_sheet(beam, Path(args.sheet), args.beam)
    if args.text:
        print(recheck_text(recheck(beam)))
        return EXIT_OK
    try:
        text = check_output(beam)
    except ValueError as exc:  # a result that is not finite is a defect of the recheck, never printed
        print(f"bracewalk check: the recheck gave a value that is not finite ({exc}); nothing printed", file=sys.stderr)
        return EXIT_FAILURE
    print(text)
    return EXIT_OK


def write_sheet(beam: Beam, out: Path, source: str) -> None:
    """Write the beam's recheck sheet PDF to ``out`` and say so on standard error (stdout stays the result).

    The sheet says when and with which version it was made, and from which file (with the SHA-256 of the
    beam as read, so a sheet can be matched to its input).
    """
    import datetime
    import hashlib
    from importlib.metadata import version

    from core.recheck import recheck
    from reports.render import render_recheck_sheet

    digest = hashlib.sha256(beam.model_dump_json().encode()).hexdigest()[:16]
    name = "standard input" if source == "-" else Path(source).name
    prepared = (
        f"Rechecked {datetime.date.today().isoformat()} with bracewalk {version('bracewalk')} "
        f"from {name} (beam SHA-256 {digest}…)."
    )
    pdf = render_recheck_sheet(beam, recheck(beam), note="Line loads as given in the beam file.", prepared=prepared)
    try:
        out.write_bytes(pdf)
    except OSError as exc:
        msg = f"cannot write the recheck sheet to {out}: {exc.strerror or exc}"
        raise UserError(msg) from exc
    print(f"recheck sheet: {out}", file=sys.stderr)


def cmd_schema(_args: argparse.Namespace) -> int:
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
    p.add_argument(
        "--sheet",
        metavar="FILE.pdf",
        help="also write the beam's recheck sheet: inputs, every check and every factor with its clause",
    )
    p.set_defaults(func=cmd_check)
    p = sub.add_parser("schema", help="print the JSON Schema of the beam input")
    p.set_defaults(func=cmd_schema)
    _add_more(sub)
    return parser


def _add_more(sub: Any) -> None:
    """Commands that live in their own modules (demo, report, sync, app)."""
    from mobile import commands, hub_commands, portfolio

    commands.register(sub)
    hub_commands.register(sub)
    portfolio.register(sub)


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``bracewalk`` console script."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        from mobile.commands import cmd_app

        return cmd_app(args)
    from storage import StorageError
    from storage.db import storage_error

    sub_name = getattr(args, "sync_command", None) or getattr(args, "tables_command", None)
    name = " ".join(["bracewalk", args.command, *([sub_name] if sub_name else [])])
    try:
        return int(args.func(args))
    except UserError as exc:
        print(f"{name}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except StorageError as exc:
        print(f"{name}: {exc}", file=sys.stderr)
        return EXIT_FAILURE
    except sqlite3.Error as exc:  # a read from a damaged file (writes arrive as StorageError)
        print(f"{name}: {storage_error(exc, getattr(args, 'db', None) or 'the database')}", file=sys.stderr)
        return EXIT_FAILURE
    except BrokenPipeError:
        # the reader went away (output piped into head): stop quietly, as command-line tools do
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return EXIT_FAILURE
    except OSError as exc:
        where = f" {exc.filename}" if exc.filename else ""
        print(f"{name}: cannot use{where}: {exc.strerror or exc}", file=sys.stderr)
        return EXIT_FAILURE


if __name__ == "__main__":
    raise SystemExit(main())
