"""Office hub commands (contract 3): ``bracewalk hub ...`` and the tablet's ``sync enroll`` / ``sync hub``.

The ``hub`` commands run the office side, so they load ``office`` when called (never at import);
the ``sync`` commands talk to a hub only over HTTP.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path
from typing import Any

from mobile.cli import EXIT_FAILURE, EXIT_OK, UserError

DEFAULT_PORT = 8470


def default_hub_db() -> Path:
    """The hub database in the user's data folder."""
    base = Path(os.environ.get("BRACEWALK_HOME", Path.home() / ".bracewalk"))
    base.mkdir(parents=True, exist_ok=True)
    return base / "hub.db"


def _hub(db: str | None) -> Any:
    from office.hubstore import HubStore

    if db and "://" in db and not db.startswith(("postgresql://", "postgres://")):
        msg = f"--db {db}: give an SQLite file path or a postgresql:// URL"
        raise UserError(msg)
    try:
        return HubStore(db or default_hub_db())
    except OSError as exc:
        msg = f"cannot open the hub database {db}: {exc}"
        raise UserError(msg) from exc


def cmd_hub_serve(args: argparse.Namespace) -> int:
    """Serve the hub over HTTP (HTTPS with --cert and --key) until interrupted."""
    import uvicorn

    from office.app import create_app

    if bool(args.cert) != bool(args.key):
        msg = "--cert and --key go together"
        raise UserError(msg)
    hub = _hub(" ".join(args.db) if args.db else None)
    scheme = "https" if args.cert else "http"
    print(f"bracewalk hub {hub.hub_id} on {scheme}://{args.host}:{args.port} (database {hub.path})", flush=True)
    uvicorn.run(
        create_app(hub),
        host=args.host,
        port=args.port,
        ssl_certfile=args.cert,
        ssl_keyfile=args.key,
        log_level="warning",
    )
    return EXIT_OK


def cmd_hub_backup(args: argparse.Namespace) -> int:
    """A consistent backup of the hub into a new folder (VACUUM INTO for SQLite, pg_dump for PostgreSQL)."""
    from office.backup import backup

    try:
        out = backup(" ".join(args.db) if args.db else str(default_hub_db()), Path(args.out))
    except (OSError, RuntimeError) as exc:
        msg = f"backup failed: {exc}"
        raise UserError(msg) from exc
    print(f"hub backed up to {out}")
    return EXIT_OK


def cmd_hub_restore(args: argparse.Namespace) -> int:
    """Restore a backup folder into a new SQLite file or an empty PostgreSQL database."""
    from office.backup import restore

    try:
        hub = restore(Path(args.backup), " ".join(args.db))
    except (OSError, RuntimeError) as exc:
        msg = f"restore failed: {exc}"
        raise UserError(msg) from exc
    print(f"hub {hub.hub_id} restored into {args.db[0]}: {len(hub.devices())} devices, hub_seq {hub.hub_seq()}")
    hub.close()
    return EXIT_OK


def cmd_hub_enroll(args: argparse.Namespace) -> int:
    """Make a one-time enrolment code; the code is alone on the last line."""
    hub = _hub(args.db)
    try:
        code = hub.new_code(args.name, args.person, args.role)
    except ValueError as exc:
        raise UserError(str(exc)) from exc
    finally:
        hub.close()
    if args.qr:
        from office.registry import write_enrolment_qr

        try:
            write_enrolment_qr(code, args.qr)
        except OSError as exc:
            msg = f"cannot write the QR image {args.qr}: {exc.strerror or exc}"
            raise UserError(msg) from exc
        print(f"QR image of the code (for the tablet to scan): {args.qr}")
    print(f"enrolment code for {args.name} ({args.person}, {args.role}); use once, within 24 hours:")
    print(code)
    return EXIT_OK


def _shell_user() -> str:
    """Who ran a hub command, for its audit entry ('command line (USER)')."""
    import getpass

    try:
        return f"command line ({getpass.getuser()})"
    except (KeyError, OSError):
        return "command line"


def _device_action(args: argparse.Namespace, action: str) -> Any:
    """Revoke or reinstate the device ``args.device`` at the hub ``args.db``, audited as the shell user."""
    hub = _hub(args.db)
    try:
        return (
            hub.revoke(args.device, by=_shell_user())
            if action == "revoke"
            else hub.reinstate(args.device, by=_shell_user())
        )
    except KeyError as exc:
        msg = f"no enrolled device {args.device}"
        raise UserError(msg) from exc
    finally:
        hub.close()


def cmd_hub_revoke(args: argparse.Namespace) -> int:
    """Refuse a device from now on."""
    dev = _device_action(args, "revoke")
    print(f"revoked {dev.name} ({dev.person}, {dev.role}); what it sent before stays in the log")
    return EXIT_OK


def cmd_hub_reinstate(args: argparse.Namespace) -> int:
    """Accept a revoked device again (a revocation made in error)."""
    dev = _device_action(args, "reinstate")
    print(f"reinstated {dev.name} ({dev.person}, {dev.role}); what it saved while revoked is accepted at its next sync")
    return EXIT_OK


def cmd_hub_cert(args: argparse.Namespace) -> int:
    """Make a self-signed certificate and key for the hub (a small office without its own)."""
    from office.tls import make_self_signed

    try:
        crt, key = make_self_signed(Path(args.out), args.name)
    except ValueError as exc:
        raise UserError(str(exc)) from exc
    print(f"certificate {crt} and key {key}; serve with --cert {crt} --key {key},")
    print(f"and give {crt} to each tablet: bracewalk sync enroll --ca {crt.name} ...")
    return EXIT_OK


def cmd_hub_digest(args: argparse.Namespace) -> int:
    """Print the hub's content digest (equal to a tablet's ``sync digest`` when they hold the same records)."""
    hub = _hub(args.db)
    try:
        print(hub.digest())
    finally:
        hub.close()
    return EXIT_OK


def cmd_hub_user_add(args: argparse.Namespace) -> int:
    """Add an office user for the register pages; the password is asked for, or read from stdin."""
    import getpass

    from office import registry

    if sys.stdin.isatty():
        password = getpass.getpass(f"password for {args.name}: ")
        if getpass.getpass("again: ") != password:
            msg = "the two passwords differ"
            raise UserError(msg)
    else:
        password = sys.stdin.readline().rstrip("\n")
    hub = _hub(args.db)
    try:
        registry.add_user(hub, args.name, password)
    except ValueError as exc:
        raise UserError(str(exc)) from exc
    finally:
        hub.close()
    print(f"office user {args.name} can now log in to the register")
    return EXIT_OK


def _tablet(db: str) -> Any:
    from storage import Store

    if not Path(db).exists():
        msg = f"no database at {db}"
        raise UserError(msg)
    return Store(db)


def cmd_sync_enroll(args: argparse.Namespace) -> int:
    """Enrol this tablet at a hub with a one-time code."""
    from mobile.hub_client import HubError, enroll

    store = _tablet(args.db)
    ca_pem = ""
    if args.ca:
        try:
            ca_pem = Path(args.ca).read_text(encoding="ascii")
        except (OSError, UnicodeDecodeError) as exc:
            msg = f"cannot read the office certificate {args.ca}: {exc}"
            raise UserError(msg) from exc
    try:
        answer = enroll(store, args.url, args.code, ca_pem)
    except HubError as exc:
        print(f"bracewalk sync enroll: {exc.reason}", file=sys.stderr)
        return EXIT_FAILURE
    print(f"enrolled as {answer['name']} ({answer['person']}, {answer['role']}); device {answer['device_id']}")
    return EXIT_OK


def cmd_sync_hub(args: argparse.Namespace) -> int:
    """Push, then pull until up to date; 0 when in step, 1 with the reason otherwise."""
    from mobile.hub_client import HubError, sync

    store = _tablet(args.db)
    try:
        result = sync(store)
    except HubError as exc:
        print(f"bracewalk sync hub: {exc.reason}", file=sys.stderr)
        return EXIT_FAILURE
    print(f"sent {result.pushed} changes and {result.blobs_sent} files; received {result.pulled_new} new changes")
    if result.rejected:
        from storage.hubsync import rejection_words

        print(f"bracewalk sync hub: the office holds {len(result.rejected)} changes back:", file=sys.stderr)
        for item in rejection_words(store):
            print(f"  {item}", file=sys.stderr)
        return EXIT_FAILURE
    if result.version_words:
        print(f"bracewalk sync hub: {result.version_words}", file=sys.stderr)
        return EXIT_FAILURE
    return EXIT_OK


def register(sub: Any) -> None:
    """Add ``hub ...`` and the hub parts of ``sync`` to the command line."""
    hub = sub.add_parser("hub", help="run the office hub and manage its devices").add_subparsers(
        dest="hub_command", required=True
    )
    p = hub.add_parser("serve", help="serve the office hub over HTTP")
    p.add_argument(
        "--db",
        action="append",
        help="hub database file (default: hub.db in the user's data folder), or a postgresql:// URL; "
        "repeat --db with each server's URL of a primary and its standbys to follow the one that accepts writes",
    )
    p.add_argument("--host", default="127.0.0.1")
    p.add_argument("--port", type=int, default=DEFAULT_PORT)
    p.add_argument("--cert", help="TLS certificate file (PEM)")
    p.add_argument("--key", help="TLS private key file (PEM)")
    p.set_defaults(func=cmd_hub_serve)
    p = hub.add_parser("backup", help="take a consistent backup of the hub into a new folder")
    p.add_argument("--db", action="append", help="hub database file or postgresql:// URL (repeatable)")
    p.add_argument("--out", required=True, help="a new folder for the backup")
    p.set_defaults(func=cmd_hub_backup)
    p = hub.add_parser("restore", help="restore a backup into a new SQLite file or an empty PostgreSQL database")
    p.add_argument("backup", help="the folder written by 'bracewalk hub backup'")
    p.add_argument("--db", action="append", required=True, help="target: a new file or an empty database's URL")
    p.set_defaults(func=cmd_hub_restore)
    p = hub.add_parser("enroll", help="make a one-time code for a tablet to enrol")
    p.add_argument("--db")
    p.add_argument("--name", required=True, help="the device's name, e.g. 'Tablet 3'")
    p.add_argument("--person", required=True, help="who uses it")
    p.add_argument("--role", required=True, choices=["reviewer", "technician", "office"])
    p.add_argument("--qr", metavar="FILE.png", help="also write the code as a QR image (PNG) to scan")
    p.set_defaults(func=cmd_hub_enroll)
    p = hub.add_parser("revoke", help="refuse a device from now on")
    p.add_argument("--db")
    p.add_argument("device", help="device id")
    p.set_defaults(func=cmd_hub_revoke)
    p = hub.add_parser("reinstate", help="accept a revoked device again (a revocation made in error)")
    p.add_argument("--db")
    p.add_argument("device", help="device id")
    p.set_defaults(func=cmd_hub_reinstate)
    p = hub.add_parser("cert", help="make a self-signed TLS certificate and key for the hub")
    p.add_argument("--out", required=True, help="folder for hub.crt and hub.key")
    p.add_argument("--name", action="append", default=[], help="host name or IP the tablets use (repeatable)")
    p.set_defaults(func=cmd_hub_cert)
    p = hub.add_parser("digest", help="print a hash over the hub's records")
    p.add_argument("--db")
    p.set_defaults(func=cmd_hub_digest)
    users = hub.add_parser("user", help="office users of the register pages").add_subparsers(
        dest="user_command", required=True
    )
    p = users.add_parser("add", help="add an office user (password asked for, or read from stdin)")
    p.add_argument("--db")
    p.add_argument("--name", required=True)
    p.set_defaults(func=cmd_hub_user_add)
    sync = _subcommands(sub.choices["sync"])
    p = sync.add_parser("enroll", help="enrol this tablet at an office hub with a one-time code")
    p.add_argument("--db", required=True)
    p.add_argument("url", help="the hub's address, e.g. http://office.local:8470")
    p.add_argument("code", help="the one-time code from 'bracewalk hub enroll'")
    p.add_argument("--ca", help="the office's self-signed certificate (hub.crt from 'bracewalk hub cert') to trust")
    p.set_defaults(func=cmd_sync_enroll)
    p = sync.add_parser("hub", help="sync with the office hub: push, then pull until up to date")
    p.add_argument("--db", required=True)
    p.set_defaults(func=cmd_sync_hub)


def _subcommands(parser: argparse.ArgumentParser) -> Any:
    """The subcommand group of an existing parser (``sync`` is built in mobile/commands.py)."""
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return action
    msg = f"{parser.prog} has no subcommands"
    raise RuntimeError(msg)
