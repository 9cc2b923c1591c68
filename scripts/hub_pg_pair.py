#!/usr/bin/env python3
"""A PostgreSQL primary and a synchronous hot standby for the office hub, in folders on 127.0.0.1.

    .venv/bin/python scripts/hub_pg_pair.py start --dir /srv/bracewalk-pg [--database hub]
    .venv/bin/python scripts/hub_pg_pair.py status --dir /srv/bracewalk-pg
    .venv/bin/python scripts/hub_pg_pair.py promote --dir /srv/bracewalk-pg   # the primary is gone
    .venv/bin/python scripts/hub_pg_pair.py stop --dir /srv/bracewalk-pg

``start`` makes both servers from Debian's postgresql (initdb, pg_basebackup -R), with
``synchronous_standby_names = '*'`` and ``synchronous_commit = remote_apply`` on the primary, so
every commit the hub acknowledges is applied on the standby too; it prints the ``bracewalk hub
serve`` line with both addresses. Both listen on 127.0.0.1 only, with trust authentication: for one
machine (a trial, or two disks of one server). Across two machines, set listen_addresses, a
password (scram-sha-256) and pg_hba.conf lines for the hub's address and for replication.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from office.pgha import PgServer, SyncPair


def _servers(folder: Path) -> tuple[PgServer, PgServer]:
    ports = json.loads((folder / "ports.json").read_text())
    primary = PgServer(folder / "primary", port=ports["primary"])
    standby = PgServer(folder / "standby", port=ports["standby"])
    return primary, standby


def main(argv: list[str] | None = None) -> int:
    """Start, report on, promote or stop the pair in ``--dir``."""
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("action", choices=["start", "status", "promote", "stop"])
    parser.add_argument("--dir", required=True, type=Path, help="folder for both servers (made by start)")
    parser.add_argument("--database", default="hub", help="the hub's database name (start)")
    args = parser.parse_args(argv)
    folder: Path = args.dir.resolve()
    if args.action == "start":
        if (folder / "ports.json").exists():
            primary, standby = _servers(folder)
            primary.start()
            standby.start()
        else:
            pair = SyncPair(folder).start()
            pair.create_database(args.database)
            primary, standby = pair.primary, pair.standby
            (folder / "ports.json").write_text(json.dumps({"primary": primary.port, "standby": standby.port}))
        print("primary", primary.url(args.database))
        print("standby", standby.url(args.database))
        print(f"bracewalk hub serve --db {primary.url(args.database)} --db {standby.url(args.database)}")
        return 0
    primary, standby = _servers(folder)
    if args.action == "status":
        for name, server in (("primary", primary), ("standby", standby)):
            running = (server.data / "postmaster.pid").exists()
            print(f"{name}: port {server.port}, {'running' if running else 'stopped'}")
        return 0
    if args.action == "promote":
        standby.promote()
        print(f"standby on port {standby.port} promoted: it accepts writes; make a new standby from it")
        return 0
    standby.stop()
    primary.stop()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
