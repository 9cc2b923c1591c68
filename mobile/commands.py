"""Subcommands beyond check/schema: app, demo, report, sync (registered here so cli.py stays small)."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from mobile.errors import EXIT_FAILURE, EXIT_OK, UserError


def cmd_app(args: argparse.Namespace) -> int:
    """Open the tablet app (imports Kivy)."""
    from mobile.app import run_app

    return run_app(getattr(args, "db", None))


def _open_store(db: str, must_exist: bool = True) -> Any:
    from storage import Store

    if must_exist and not Path(db).exists():
        msg = f"no database at {db}"
        raise UserError(msg)
    return Store(db)


def cmd_sync_export(args: argparse.Namespace) -> int:
    """Write a bundle of the changes a peer has not seen (all changes without --peer)."""
    from storage.bundle import export_bundle

    store = _open_store(args.db)
    if not Path(args.out).parent.is_dir():
        msg = f"no folder {Path(args.out).parent} to write {Path(args.out).name} in"
        raise UserError(msg)
    if Path(args.out).is_dir():
        msg = f"{args.out} is a folder; give a file name for the bundle"
        raise UserError(msg)
    manifest = export_bundle(store, args.out, peer=args.peer, include_demo=args.include_demo)
    parts = int(manifest.get("parts", 1))
    where = args.out if parts == 1 else f"{parts} files ({args.out} first; import them in order)"
    print(f"exported {manifest['op_count']} ops and {len(manifest['blobs'])} blobs to {where}")
    return EXIT_OK


def _apply_held(store: Any) -> None:
    """Apply the bundles held for a newer app that this one now reads, saying what each did."""
    from storage.held import apply_held

    for held, report in apply_held(store):
        what = f"held bundle {held.sha256[:12]} (written by record schema {held.schema_version})"
        if report.outcome == "applied":
            print(f"{what}: applied now, {report.ops_new} new ops of {report.ops_total}")
        else:
            print(f"bracewalk sync import: {what} still held: {report.reason}", file=sys.stderr)


def cmd_sync_import(args: argparse.Namespace) -> int:
    """Verify and merge a bundle (creates the database if it does not exist)."""
    from storage.bundle import import_bundle

    if not Path(args.file).exists():
        msg = f"no bundle at {args.file}"
        raise UserError(msg)
    if Path(args.file).is_dir():
        msg = f"{args.file} is a folder; give the bundle file"
        raise UserError(msg)
    store = _open_store(args.db, must_exist=False)
    _apply_held(store)  # bundles held until this app was updated: before the new one, in the order received
    report = import_bundle(store, args.file)
    if report.outcome == "refused":
        print(f"bracewalk sync import: bundle refused, nothing changed: {report.reason}", file=sys.stderr)
        return EXIT_FAILURE
    if report.outcome == "held":
        print(f"bundle held, not applied: {report.reason}; a copy is kept: `sync import` applies it after an update")
        return EXIT_OK
    print(
        f"merged {report.ops_new} new ops of {report.ops_total} ({report.ops_total - report.ops_new} already held), "
        f"{report.blobs_new} blobs; {report.conflicts_new} new conflicts to review"
    )
    if report.warning:
        print(f"  warning: {report.warning}")
    for c in store.conflicts():
        print(
            f"  conflict {c['id']}: {c['entity']} {c['record_id'][:8]} {c['field']}: kept {c['winner_value']}, "
            f"other value {c['loser_value']}"
        )
    return EXIT_OK


def cmd_sync_digest(args: argparse.Namespace) -> int:
    """Print one line: a hash over the synced content."""
    print(_open_store(args.db).digest())
    return EXIT_OK


def cmd_demo(args: argparse.Namespace) -> int:
    """Run the whole job on the demo site, headless."""
    from mobile.demo.run import run_demo

    return run_demo(Path(args.out), serve=args.serve)


def cmd_report(args: argparse.Namespace) -> int:
    """Issue a notice for a site's open deficiencies, or verify a PDF against the issued notices."""
    from mobile.issue import (
        MemoryRowsNotAcknowledged,
        acknowledge,
        issue_notice_for_site,
        rows_for_items,
        verify_pdf,
    )
    from reports.tablerows import memory_rows
    from storage.oplog import IntegrityError

    store = _open_store(args.db)
    if args.verify:
        if not Path(args.verify).is_file():
            msg = f"no PDF file at {args.verify}"
            raise UserError(msg)
        try:
            found = verify_pdf(store, Path(args.verify))
        except IntegrityError as exc:
            print(f"bracewalk report: {args.verify}: cannot be verified: {exc}", file=sys.stderr)
            return EXIT_FAILURE
        if found is None:
            print(f"{args.verify}: NOT an issued notice of this database (or it was changed)")
            return EXIT_FAILURE
        print(f"{args.verify}: exactly issued notice {found.number} rev {found.revision}, {found.issued_at}")
        return EXIT_OK
    if not args.site or not args.out:
        msg = "report needs --site and --out (or --verify FILE)"
        raise UserError(msg)
    try:
        site = store.find_site(args.site)
    except KeyError as exc:
        raise UserError(str(exc)) from exc
    if Path(args.out).is_dir():
        msg = f"{args.out} is a folder; give a file name for the PDF"
        raise UserError(msg)
    rows = rows_for_items(store, site.id)
    memory = memory_rows(rows)
    if memory and not args.acknowledge_memory_rows:
        listed = "\n  ".join(memory)
        msg = (
            f"not issued: the items rest on {len(memory)} table row(s) entered from memory, not yet checked "
            f"against the standard's text:\n  {listed}\nCheck them, then issue again with "
            f"--acknowledge-memory-rows (recorded on the notice with --by and the time), or verify them first "
            f"with 'bracewalk tables verify'"
        )
        raise UserError(msg)
    ack = acknowledge(store, rows, args.by) if args.acknowledge_memory_rows else None
    try:
        notice, path = issue_notice_for_site(store, site.id, Path(args.out), issued_by=args.by, acknowledgement=ack)
    except MemoryRowsNotAcknowledged as exc:  # a row changed between the listing and the issue
        msg = f"not issued: {exc}"
        raise UserError(msg) from exc
    print(f"issued notice {notice.number} ({len(notice.deficiency_ids)} items) to {path}; sha256 {notice.pdf_sha256}")
    return EXIT_OK


def register(sub: Any) -> None:
    """Add the app, demo, report and sync subcommands."""
    p = sub.add_parser("app", help="open the tablet app")
    p.add_argument("--db", help="database file (default: the per-user database)")
    p.set_defaults(func=cmd_app)
    p = sub.add_parser("demo", help="run the whole job headless on the built-in demo site")
    p.add_argument("--out", required=True, help="folder to create for the database, notice PDF and bundle")
    p.add_argument("--serve", action="store_true", help="keep the demo office hub running and print its address")
    p.set_defaults(func=cmd_demo)
    p = sub.add_parser("report", help="issue a deficiency notice PDF, or verify one")
    p.add_argument("--db", required=True)
    p.add_argument("--site", help="site name or id")
    p.add_argument("--out", help="PDF file to write")
    p.add_argument("--by", default="Reviewer", help="name of the issuing reviewer")
    p.add_argument("--verify", metavar="FILE.pdf", help="say whether FILE.pdf is exactly an issued notice")
    p.add_argument(
        "--acknowledge-memory-rows",
        action="store_true",
        help="the reviewer (--by) has checked the table rows entered from memory that the items use; "
        "without it a notice resting on such rows is refused (the rows are listed)",
    )
    p.set_defaults(func=cmd_report)
    sync = sub.add_parser("sync", help="carry changes between devices by file").add_subparsers(
        dest="sync_command", required=True
    )
    p = sync.add_parser("export", help="write a bundle of changes")
    p.add_argument("--db", required=True)
    p.add_argument("--out", required=True)
    p.add_argument("--peer", help="only changes this peer has not seen")
    p.add_argument("--include-demo", action="store_true", help="also the built-in demo site (left out unless asked)")
    p.set_defaults(func=cmd_sync_export)
    p = sync.add_parser("import", help="verify and merge a bundle")
    p.add_argument("--db", required=True)
    p.add_argument("file")
    p.set_defaults(func=cmd_sync_import)
    p = sync.add_parser("digest", help="print a hash over the synced content")
    p.add_argument("--db", required=True)
    p.set_defaults(func=cmd_sync_digest)
