"""PostgreSQL servers for the hub from Debian's binaries: one server, or a primary with a synchronous hot standby.

Used by ``scripts/hub-pg-pair`` (a primary and a standby in folders on 127.0.0.1, for a trial or a
small office), by the test suite and by ``bench/hub.py``. Nothing here is home-made replication:
the standby is a ``pg_basebackup -R`` copy that streams the primary's WAL, and the primary waits for
it on every commit (``synchronous_standby_names = '*'``, ``synchronous_commit = remote_apply``), so a
push the hub acknowledges is already applied on both servers.

Failover is the operator's call (or a test's): ``promote`` the standby when the primary is gone. The
hub, given both addresses, follows whichever accepts writes. The promoted server then runs without
a synchronous partner (``synchronous_standby_names`` is empty on the standby); make a new standby
from it with the same steps before relying on it again.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import signal
import socket
import subprocess
import tempfile
import time
from pathlib import Path

import psycopg

SYNC_SETTINGS = (
    "wal_level = replica",
    "max_wal_senders = 5",
    "hot_standby = on",
    "synchronous_standby_names = '*'",
    "synchronous_commit = remote_apply",
)


def pg_bindir() -> Path | None:
    """The folder of Debian's PostgreSQL server binaries (newest version), or None if not installed."""
    found = shutil.which("pg_ctl")
    if found:
        return Path(os.path.realpath(found)).parent
    versions = sorted(Path("/usr/lib/postgresql").glob("*/bin/pg_ctl"))
    return versions[-1].parent if versions else None


def free_port() -> int:
    """A free TCP port on 127.0.0.1."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


class PgServer:
    """One PostgreSQL server in a folder, listening on 127.0.0.1 only, trust authentication for local use.

    Run as root, the server runs as the ``postgres`` user (PostgreSQL refuses to run as root).
    ``durable=False`` (tests) turns fsync off: the data survives a killed server, not a power cut.
    """

    def __init__(self, folder: Path | None = None, port: int | None = None, durable: bool = True):
        """Choose the folder (a new temporary one by default) and port (a free one by default)."""
        bindir = pg_bindir()
        if bindir is None:
            msg = "PostgreSQL is not installed (scripts/setup.sh installs Debian's postgresql)"
            raise RuntimeError(msg)
        self.bin = bindir
        self.dir = Path(folder) if folder else Path(tempfile.mkdtemp(prefix="bracewalk-pg-"))
        self.dir.mkdir(parents=True, exist_ok=True)
        self.data = self.dir / "data"
        self.port = port or free_port()
        self.durable = durable
        self.as_postgres = ["runuser", "-u", "postgres", "--"] if os.geteuid() == 0 else []
        if self.as_postgres:
            shutil.chown(self.dir, "postgres", "postgres")

    def url(self, dbname: str = "postgres") -> str:
        """A libpq URL for a database on this server."""
        return f"postgresql://postgres@127.0.0.1:{self.port}/{dbname}"

    def run(self, tool: str, *args: str, timeout_s: float = 120) -> str:
        """Run one PostgreSQL tool from the server's bin folder (as ``postgres`` when root); its output."""
        done = subprocess.run(
            [*self.as_postgres, str(self.bin / tool), *args], capture_output=True, text=True, timeout=timeout_s
        )
        if done.returncode != 0:
            msg = f"{tool} {' '.join(args)} failed: {done.stderr.strip() or done.stdout.strip()}"
            raise RuntimeError(msg)
        return done.stdout

    def init(self, settings: tuple[str, ...] = ()) -> PgServer:
        """Make the cluster (initdb), trust authentication on 127.0.0.1 and local, plus ``settings``."""
        self.run("initdb", "-D", str(self.data), "-A", "trust", "-U", "postgres", "--no-sync", "-E", "UTF8")
        self.configure(settings)
        return self

    def configure(self, settings: tuple[str, ...]) -> None:
        """Append settings to postgresql.conf (later lines win)."""
        lines = [
            "listen_addresses = '127.0.0.1'",
            f"port = {self.port}",
            f"unix_socket_directories = '{self.dir}'",
            *(() if self.durable else ("fsync = off",)),
            *settings,
        ]
        with open(self.data / "postgresql.conf", "a", encoding="utf-8") as conf:
            conf.write("\n# bracewalk hub\n" + "\n".join(lines) + "\n")

    def start(self) -> PgServer:
        """Start the server and wait until it accepts connections."""
        self.run("pg_ctl", "-D", str(self.data), "-l", str(self.dir / "log"), "-w", "-t", "60", "start")
        return self

    def stop(self) -> None:
        """Stop the server (immediate mode) if it runs."""
        if (self.data / "postmaster.pid").exists():
            subprocess.run(
                [*self.as_postgres, str(self.bin / "pg_ctl"), "-D", str(self.data), "-m", "immediate", "-w", "stop"],
                capture_output=True,
                timeout=60,
            )

    def kill(self) -> None:
        """SIGKILL the server and every one of its processes, as if the machine died (tests, drills)."""
        pid = int((self.data / "postmaster.pid").read_text().split()[0])
        children = [p for p in _all_pids() if _parent(p) == pid]
        for p in [pid, *children]:
            with contextlib.suppress(ProcessLookupError):  # already gone
                os.kill(p, signal.SIGKILL)
        deadline = time.monotonic() + 10
        while time.monotonic() < deadline and any(_alive(p) for p in [pid, *children]):
            time.sleep(0.05)
        # as after a reboot: the lock file stays, naming a process that is gone (a killed server may stay
        # a zombie where nothing reaps orphans, and PostgreSQL would take it for a running server)
        (self.data / "postmaster.pid").unlink(missing_ok=True)
        (self.dir / f".s.PGSQL.{self.port}.lock").unlink(missing_ok=True)

    def promote(self) -> None:
        """Promote this standby to primary and wait until it accepts writes."""
        self.run("pg_ctl", "-D", str(self.data), "-w", "-t", "60", "promote")
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            with psycopg.connect(self.url(), autocommit=True) as conn:
                row = conn.execute("SELECT pg_is_in_recovery()").fetchone()
                if row is not None and not row[0]:
                    return
            time.sleep(0.1)
        msg = "the standby did not leave recovery within 60 s"
        raise RuntimeError(msg)

    def create_database(self, name: str) -> str:
        """Create a database (UTF-8) and return its URL."""
        with psycopg.connect(self.url(), autocommit=True) as conn:
            conn.execute(f'CREATE DATABASE "{name}"')
        return self.url(name)

    def remove(self) -> None:
        """Stop the server and delete its folder."""
        try:
            self.stop()
        finally:
            shutil.rmtree(self.dir, ignore_errors=True)


class SyncPair:
    """A primary and a streaming hot standby it waits for on every commit (synchronous replication)."""

    def __init__(self, folder: Path | None = None, durable: bool = True):
        """Choose folders ``primary`` and ``standby`` under ``folder`` (a new temporary one by default)."""
        base = Path(folder) if folder else Path(tempfile.mkdtemp(prefix="bracewalk-pgpair-"))
        base.mkdir(parents=True, exist_ok=True)
        if os.geteuid() == 0:  # the servers run as postgres, who must reach their folders
            shutil.chown(base, "postgres", "postgres")
        self.primary = PgServer(base / "primary", durable=durable)
        self.standby = PgServer(base / "standby", durable=durable)
        self.base = base

    def start(self) -> SyncPair:
        """Make the primary, copy it with pg_basebackup -R, start both; wait until the standby streams."""
        self.primary.init(SYNC_SETTINGS).start()
        self.standby.data.parent.mkdir(parents=True, exist_ok=True)
        self.primary.run(
            "pg_basebackup",
            "-h",
            "127.0.0.1",
            "-p",
            str(self.primary.port),
            "-U",
            "postgres",
            "-D",
            str(self.standby.data),
            "-R",
            "-X",
            "stream",
            "-c",
            "fast",
            "--no-sync",
        )
        # the copy carries the primary's settings: its own port, and no synchronous partner of its own
        self.standby.configure(("synchronous_standby_names = ''",))
        self.standby.start()
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            with psycopg.connect(self.primary.url(), autocommit=True) as conn:
                row = conn.execute("SELECT count(*) FROM pg_stat_replication WHERE sync_state = 'sync'").fetchone()
                if row is not None and row[0] >= 1:
                    return self
            time.sleep(0.1)
        msg = "the standby did not start streaming synchronously within 60 s"
        raise RuntimeError(msg)

    def urls(self, dbname: str) -> list[str]:
        """Both addresses of a database, primary first (give both to the hub)."""
        return [self.primary.url(dbname), self.standby.url(dbname)]

    def create_database(self, name: str) -> list[str]:
        """Create a database on the primary (it reaches the standby by replication); both addresses."""
        self.primary.create_database(name)
        return self.urls(name)

    def remove(self) -> None:
        """Stop both servers and delete their folders."""
        try:
            self.standby.remove()
        finally:
            self.primary.remove()
            shutil.rmtree(self.base, ignore_errors=True)


def _all_pids() -> list[int]:
    return [int(p.name) for p in Path("/proc").iterdir() if p.name.isdigit()]


def _parent(pid: int) -> int | None:
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return None
    return int(stat.rsplit(")", 1)[1].split()[1])


def _alive(pid: int) -> bool:
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return False
    return stat.rsplit(")", 1)[1].split()[0] != "Z"
