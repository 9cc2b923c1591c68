"""`bracewalk recheck`: recheck every stored beam, report what changed, store the new results."""

from __future__ import annotations

import argparse
import json
import os
import sys
from typing import TYPE_CHECKING, Any

from mobile.errors import EXIT_OK, UserError

if TYPE_CHECKING:
    from storage.results import Place

PROGRESS_STEPS = 10  # lines a progress log written to a file or pipe gets: one per tenth of the beams


def _progress(stream: Any) -> Any:
    """The portfolio's progress on ``stream``: a bar redrawn in place on a terminal, else a line per tenth.

    A bar redrawn with carriage returns reads as one long line of bars in a file or a CI log.
    """
    from storage.results import progress_bar

    if stream.isatty():

        def bar(done: int, total: int) -> None:
            end = "\n" if done >= total else ""
            stream.write(f"\r{progress_bar(done, total)}{end}")
            stream.flush()

        return bar
    shown = [-1]  # the last tenth written

    def lines(done: int, total: int) -> None:
        tenth = PROGRESS_STEPS if done >= total else PROGRESS_STEPS * done // max(total, 1)
        if tenth > shown[0]:
            shown[0] = tenth
            stream.write(f"recheck: {done:,} / {total:,} beams\n")
            stream.flush()

    return lines


def where(place: Place | None, beam_id: str) -> str:
    """'Cedar Hollow Community Hall · RB-1 · grid A / 1-2 · level Roof  [beam id]': which beam, on which site."""
    site, mark, level, gridline = place or ("", "", "", "")
    parts = [site or "site not recorded", mark or "mark not recorded", f"grid {gridline or 'not recorded'}"]
    parts += [f"level {level}"] if level else []
    return f"{'  ·  '.join(parts)}  [{beam_id}]"


def _util(value: float | None) -> str:
    return "-" if value is None else f"{value:.2f}"


def changed_lines(pairs: list[tuple[Any, Any]], where_of: dict[str, Place]) -> list[str]:
    """One line per beam whose status or governing check changed: the beam and its site, before -> after.

    Sorted by site, level, gridline and mark (the order a reviewer walks a site in).
    """
    from storage.results import changed

    def order(pair: tuple[Any, Any]) -> tuple[str, ...]:
        site, mark, level, gridline = where_of.get(pair[1].beam_id, ("", "", "", ""))
        return site, level, gridline, mark, pair[1].beam_id

    out = []
    for before, after in sorted(changed(pairs), key=order):
        was = "no stored result" if before is None else f"{before.status} ({before.governing or '-'})"
        now = f"{after.status} ({after.governing or '-'})"
        util = f"utilisation {'-' if before is None else _util(before.utilisation)} -> {_util(after.utilisation)}"
        out.append(f"{where(where_of.get(after.beam_id), after.beam_id)}: {was} -> {now}  {util}")
    return out


def summary_line(rechecked: int, changed: int, new: int, skipped: int, util_only: int = 0) -> str:
    """'rechecked 13 beams (1 archived beam not rechecked); 3 changed status or governing check, ...'.

    ``new``: of the changed, those with no stored result before; ``util_only``: beams whose utilisation alone
    moved (not listed: `tables impact` lists them).
    """
    left_out = f" ({skipped:,} archived beam{'s' if skipped != 1 else ''} not rechecked)" if skipped else ""
    first = f", {new:,} of them with no stored result before" if new else ""
    beams = f"{rechecked:,} beam{'s' if rechecked != 1 else ''}"
    util = f"; {util_only:,} more changed utilisation only (`tables impact` lists them)" if util_only else ""
    return f"rechecked {beams}{left_out}; {changed:,} changed status or governing check{first}{util}"


def _site_arg(store: Any, name: str | None) -> str | None:
    """The id of the site named by ``--site`` (None for every site); a user error naming the choices."""
    if not name:
        return None
    try:
        return str(store.find_site(name).id)
    except KeyError as exc:
        raise UserError(str(exc.args[0])) from exc


def cmd_recheck(args: argparse.Namespace) -> int:
    """Recheck every stored beam (or one site's), print the changes, the counts and the caution; store the results.

    Exit 0 whether or not a result changed (the lines say what did); 2 on bad input.
    """
    from core.results import CAUTION
    from mobile.commands import _open_store
    from storage.results import archived_count, changed, places, recheck_all

    store = _open_store(args.db)
    site_id = _site_arg(store, args.site)
    processes = args.processes or min(2, os.cpu_count() or 1)  # 0: the default
    show = None if args.quiet else _progress(sys.stderr)
    run = recheck_all(store.db, site_id, processes=processes, on_progress=show)
    moved = changed(run.moved)
    lines = changed_lines(moved, places(store.db, [a.beam_id for _, a in moved]))
    for line in lines:
        print(line)
    new = sum(1 for b, _ in moved if b is None)
    print(summary_line(run.rechecked, len(lines), new, archived_count(store.db, site_id), len(run.moved) - len(moved)))
    print(CAUTION)
    return EXIT_OK


def cmd_tables_list(args: argparse.Namespace) -> int:
    """Print every table row with its status for this firm (and who verified or corrected it).

    A firm record that is not a whole, valid record is not applied: its row prints as published, with why in
    place of the provenance, and a warning for each such record goes to stderr.
    """
    from mobile.commands import _open_store
    from storage import firm_tables

    store = _open_store(args.db)
    for table, label, status, note in firm_tables.listing(store.db):
        print(f"{table}\t{label}\t{status}" + (f"\t{note}" if note else ""))
    for aside in firm_tables.set_aside(store.db):  # also those naming no published row, which the list leaves out
        print(f"warning: {aside.words}", file=sys.stderr)
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

    A notice's line names its site and each beam it cites by mark and gridline (marks repeat across sites, and
    sometimes within one).

    ``moved`` is ``PortfolioRun.moved``; beams with no stored result are listed last.
    """
    moved = [(b, a) for b, a in moved if b is not None] + [(b, a) for b, a in moved if b is None]
    from storage.results import places

    where_of = places(store.db, [a.beam_id for _, a in moved])
    lines = []
    for b, a in moved:
        was = "no stored result" if b is None else f"{b.status} ({b.governing or '-'}) {_util(b.utilisation)}"
        now = f"{a.status} ({a.governing or '-'}) {_util(a.utilisation)}"
        lines.append(f"beam {where(where_of.get(a.beam_id), a.beam_id)}: {was} -> {now}")
    beams = {a.beam_id for _, a in moved}
    deficiency_beam = dict(store.db.execute("SELECT id, json_extract(data, '$.beam_id') FROM deficiency").fetchall())
    for nid, data in store.db.execute("SELECT id, data FROM issued_notice ORDER BY id").fetchall():
        notice = json.loads(data)
        hit = sorted(
            {where_of[deficiency_beam[d]] for d in notice.get("deficiency_ids", []) if deficiency_beam.get(d) in beams}
        )
        if hit:
            sites = "; ".join(sorted({site or "site not recorded" for site, _, _, _ in hit}))
            cited = ", ".join(
                f"{mark or 'mark not recorded'} (grid {grid or 'not recorded'})" for _, mark, _, grid in hit
            )
            lines.append(
                f"notice {notice.get('number')} rev {notice.get('revision', 0)} [{nid}], {sites}: cites beams {cited}"
            )
    return lines


def cmd_tables_impact(args: argparse.Namespace) -> int:
    """Recheck every beam with the firm's tables; list beams and issued notices whose result changes."""
    from core.results import CAUTION
    from mobile.commands import _open_store
    from storage.results import recheck_all

    store = _open_store(args.db)
    processes = args.processes or min(2, os.cpu_count() or 1)  # 0: the default
    run = recheck_all(store.db, None, processes=processes, on_progress=_progress(sys.stderr))
    lines = impact_lines(store, run.moved)
    for line in lines:
        print(line)
    if not lines:
        print("no beam or issued notice changes with the firm's current tables")
    print(CAUTION)
    return EXIT_OK


MAX_PROCESSES = 32  # worker processes a portfolio recheck may ask for
PROCESSES_HELP = f"worker processes, 1 to {MAX_PROCESSES} (default: up to 2)"


def processes_arg(text: str) -> int:
    """``--processes``: a whole number from 1 to MAX_PROCESSES (argparse reports anything else, exit 2)."""
    try:
        value = int(text)
    except ValueError:
        value = 0
    if not 1 <= value <= MAX_PROCESSES:
        msg = f"{text!r} is not a whole number from 1 to {MAX_PROCESSES}"
        raise argparse.ArgumentTypeError(msg)
    return value


def register(sub: Any) -> None:
    """Add the recheck and tables subcommands."""
    p = sub.add_parser("recheck", help="recheck every stored beam and list those whose result changed")
    p.add_argument("--db", required=True)
    p.add_argument("--site", help="only this site (name or id); all sites by default")
    p.add_argument("--processes", type=processes_arg, default=0, help=PROCESSES_HELP)
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
    p.add_argument("--processes", type=processes_arg, default=0, help=PROCESSES_HELP)
    p.set_defaults(func=cmd_tables_impact)
