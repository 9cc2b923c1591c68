"""`bracewalk recheck`: recheck every stored beam, report what changed, store the new results."""

from __future__ import annotations

import argparse
import os
import sys
from typing import Any

from mobile.errors import EXIT_OK, UserError


def _progress(stream: Any) -> Any:
    from storage.results import progress_bar

    def show(done: int, total: int) -> None:
        end = "\n" if done >= total else ""
        stream.write(f"\r{progress_bar(done, total)}{end}")
        stream.flush()

    return show


def changed_lines(pairs: list[tuple[Any, Any]], marks: dict[str, str]) -> list[str]:
    """One line per beam whose status or governing check changed: mark, before -> after."""
    from storage.results import changed

    out = []
    for before, after in changed(pairs):
        was = "no stored result" if before is None else f"{before.status} ({before.governing or '-'})"
        now = f"{after.status} ({after.governing or '-'})"
        util = "" if after.utilisation is None else f"  utilisation {after.utilisation:.2f}"
        out.append(f"{marks.get(after.beam_id, after.beam_id)}  [{after.beam_id}]: {was} -> {now}{util}")
    return out


def cmd_recheck(args: argparse.Namespace) -> int:
    """Recheck every stored beam (or one site's), print the changes, store the results."""
    from mobile.commands import _open_store
    from storage.results import recheck_all

    store = _open_store(args.db)
    try:
        site_id = store.find_site(args.site).id if args.site else None
    except KeyError as exc:
        raise UserError(str(exc.args[0])) from exc
    processes = args.processes or min(2, os.cpu_count() or 1)
    show = None if args.quiet else _progress(sys.stderr)
    pairs = recheck_all(store.db, site_id, processes=processes, on_progress=show)
    sql = "SELECT id, json_extract(data, '$.mark') FROM beam" + (" WHERE site_id=?" if site_id else "")
    marks = {i: str(m) for i, m in store.db.execute(sql, [site_id] if site_id else []).fetchall()}
    lines = changed_lines(pairs, marks)
    for line in lines:
        print(line)
    print(f"rechecked {len(pairs):,} beams; {len(lines):,} changed status or governing check", file=sys.stderr)
    return EXIT_OK


def register(sub: Any) -> None:
    """Add the recheck subcommand."""
    p = sub.add_parser("recheck", help="recheck every stored beam and list those whose result changed")
    p.add_argument("--db", required=True)
    p.add_argument("--site", help="only this site (name or id); all sites by default")
    p.add_argument("--processes", type=int, default=0, help="worker processes (default: up to 2)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=cmd_recheck)
