"""`bracewalk recheck`: recheck every stored beam, report what changed, store the new results."""

from __future__ import annotations

import argparse
import json
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
    run = recheck_all(store.db, site_id, processes=processes, on_progress=show)
    sql = "SELECT id, json_extract(data, '$.mark') FROM beam" + (" WHERE site_id=?" if site_id else "")
    marks = {i: str(m) for i, m in store.db.execute(sql, [site_id] if site_id else []).fetchall()}
    lines = changed_lines(run.moved, marks)
    for line in lines:
        print(line)
    print(f"rechecked {run.rechecked:,} beams; {len(lines):,} changed status or governing check", file=sys.stderr)
    return EXIT_OK


def cmd_tables_list(args: argparse.Namespace) -> int:
    """Print every table row with its status for this firm (and who verified or corrected it)."""
    from mobile.commands import _open_store
    from storage import firm_tables

    store = _open_store(args.db)
    for table, label, status, note in firm_tables.listing(store.db):
        print(f"{table}\t{label}\t{status}" + (f"\t{note}" if note else ""))
    return EXIT_OK


def cmd_tables_verify(args: argparse.Namespace) -> int:
    """Record that a person checked a row against their copy of the standard (or corrected one value)."""
    from pydantic import ValidationError

    from mobile.commands import _open_store
    from storage import firm_tables

    store = _open_store(args.db)
    try:
        rec = firm_tables.record(
            store, args.table, args.row, args.by, args.edition, args.page, args.column, args.value, args.source or ""
        )
    except KeyError as exc:
        raise UserError(str(exc.args[0])) from exc
    except ValidationError as exc:
        e = exc.errors()[0]
        where = ".".join(str(p) for p in e["loc"])
        msg = f"{where + ': ' if where else ''}{str(e['msg']).removeprefix('Value error, ')}"
        raise UserError(msg) from exc
    what = "verified" if rec.column is None else f"{rec.column} corrected to {rec.value}"
    print(f"{rec.table} {rec.row}: {what} by {rec.by} (CSA {rec.edition} p. {rec.page}, {rec.at}); synced record")
    print("run `bracewalk tables impact --db DB` to see the beams and notices whose result changes", file=sys.stderr)
    return EXIT_OK


def impact_lines(store: Any, moved: list[tuple[Any, Any]]) -> list[str]:
    """Beams whose status, governing check or utilisation changed, then the issued notices that cite them.

    ``moved`` is ``PortfolioRun.moved``; beams with no stored result are listed last.
    """
    moved = [(b, a) for b, a in moved if b is not None] + [(b, a) for b, a in moved if b is None]
    marks = dict(store.db.execute("SELECT id, json_extract(data, '$.mark') FROM beam").fetchall())
    lines = []
    for b, a in moved:
        was = "no stored result" if b is None else f"{b.status} {b.governing} {b.utilisation}"
        lines.append(
            f"beam {marks.get(a.beam_id, a.beam_id)} [{a.beam_id}]: {was} -> {a.status} {a.governing} {a.utilisation}"
        )
    beams = {a.beam_id for _, a in moved}
    deficiency_beam = dict(store.db.execute("SELECT id, json_extract(data, '$.beam_id') FROM deficiency").fetchall())
    for nid, data in store.db.execute("SELECT id, data FROM issued_notice ORDER BY id").fetchall():
        notice = json.loads(data)
        hit = sorted(
            {
                str(marks.get(deficiency_beam.get(d), ""))
                for d in notice.get("deficiency_ids", [])
                if deficiency_beam.get(d) in beams
            }
        )
        if hit:
            lines.append(
                f"notice {notice.get('number')} rev {notice.get('revision', 0)} [{nid}]: cites beams {', '.join(hit)}"
            )
    return lines


def cmd_tables_impact(args: argparse.Namespace) -> int:
    """Recheck every beam with the firm's tables; list beams and issued notices whose result changes."""
    from mobile.commands import _open_store
    from storage.results import recheck_all

    store = _open_store(args.db)
    processes = args.processes or min(2, os.cpu_count() or 1)
    run = recheck_all(store.db, None, processes=processes, on_progress=_progress(sys.stderr))
    lines = impact_lines(store, run.moved)
    for line in lines:
        print(line)
    if not lines:
        print("no beam or issued notice changes with the firm's current tables", file=sys.stderr)
    return EXIT_OK


def register(sub: Any) -> None:
    """Add the recheck and tables subcommands."""
    p = sub.add_parser("recheck", help="recheck every stored beam and list those whose result changed")
    p.add_argument("--db", required=True)
    p.add_argument("--site", help="only this site (name or id); all sites by default")
    p.add_argument("--processes", type=int, default=0, help="worker processes (default: up to 2)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=cmd_recheck)
    tables = sub.add_parser("tables", help="the standard's table rows: status, a firm's verification, impact")
    tsub = tables.add_subparsers(dest="tables_command", required=True)
    p = tsub.add_parser("list", help="every row with its status for this firm")
    p.add_argument("--db", required=True)
    p.set_defaults(func=cmd_tables_list)
    p = tsub.add_parser("verify", help="record a row checked against your copy of the standard (or correct a value)")
    p.add_argument("--db", required=True)
    p.add_argument("table")
    p.add_argument("row", help="the row's key values joined by '/', as `tables list` prints them")
    p.add_argument("--by", required=True, help="name of the person who checked the row")
    p.add_argument("--edition", required=True, help="edition of the standard checked against (O86-19)")
    p.add_argument("--page", required=True, type=int, help="page of that edition")
    p.add_argument("--column", help="correct this column's value (with --value and --source)")
    p.add_argument("--value", help="the corrected value")
    p.add_argument("--source", help="where the corrected value comes from")
    p.set_defaults(func=cmd_tables_verify)
    p = tsub.add_parser("impact", help="recheck every beam; list beams and issued notices whose result changes")
    p.add_argument("--db", required=True)
    p.add_argument("--processes", type=int, default=0)
    p.set_defaults(func=cmd_tables_impact)
