"""Subcommands beyond check/schema: registered here so cli.py stays small."""

from __future__ import annotations

import argparse
from typing import Any


def cmd_app(args: argparse.Namespace) -> int:
    """Open the tablet app (imports Kivy)."""
    from mobile.app import run_app

    return run_app(getattr(args, "db", None))


def register(sub: Any) -> None:
    """Add the demo, report, sync and app subcommands."""
    p = sub.add_parser("app", help="open the tablet app")
    p.add_argument("--db", help="database file (default: the per-user database)")
    p.set_defaults(func=cmd_app)
