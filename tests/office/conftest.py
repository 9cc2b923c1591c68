"""A real hub on 127.0.0.1 (uvicorn in a thread, on a free port) and enrolled tablets."""

from __future__ import annotations

import os
import shutil
import socket
import subprocess
import tempfile
import threading
import time
from pathlib import Path

import pytest
import uvicorn

from mobile.hub_client import enroll
from office.app import create_app
from office.hubstore import HubStore
from storage import Store


class RunningHub:
    """A hub store served over HTTP on a loopback port."""

    def __init__(self, hub: HubStore):
        self.hub = hub
        self.sock = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
        self.sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self.sock.bind(("127.0.0.1", 0))
        self.url = f"http://127.0.0.1:{self.sock.getsockname()[1]}"
        config = uvicorn.Config(create_app(hub), log_level="error", lifespan="off")
        self.server = uvicorn.Server(config)
        self.thread = threading.Thread(target=self.server.run, kwargs={"sockets": [self.sock]}, daemon=True)

    def start(self) -> RunningHub:
        self.thread.start()
        for _ in range(200):  # bounded: 10 s
            if self.server.started:
                return self
            time.sleep(0.05)
        raise RuntimeError("hub did not start")

    def stop(self) -> None:
        self.server.should_exit = True
        self.thread.join(timeout=10)
        self.sock.close()

    def tablet(self, path, name="Tablet", person="A. Reviewer", role="reviewer") -> Store:
        store = Store(path)
        enroll(store, self.url, self.hub.new_code(name, person, role))
        return store


class PgCluster:
    """A throwaway PostgreSQL cluster: initdb into a temporary folder, a free port on 127.0.0.1."""

    def __init__(self):
        self.bin = _pg_bindir()
        self.dir = Path(tempfile.mkdtemp(prefix="bracewalk-pg-"))
        self.data = self.dir / "data"
        with socket.socket() as s:
            s.bind(("127.0.0.1", 0))
            self.port = s.getsockname()[1]
        self.as_postgres = ["runuser", "-u", "postgres", "--"] if os.geteuid() == 0 else []
        self.count = 0

    def start(self) -> PgCluster:
        if self.as_postgres:
            shutil.chown(self.dir, "postgres", "postgres")
        self._run("initdb", "-D", str(self.data), "-A", "trust", "-U", "postgres", "--no-sync", "-E", "UTF8")
        opts = f"-p {self.port} -k {self.dir} -c listen_addresses=127.0.0.1 -c fsync=off -c synchronous_commit=off"
        self._run("pg_ctl", "-D", str(self.data), "-o", opts, "-l", str(self.dir / "log"), "-w", "start")
        return self

    def _run(self, tool, *args):
        subprocess.run([*self.as_postgres, str(self.bin / tool), *args], check=True, capture_output=True, timeout=120)

    def new_database(self) -> str:
        import psycopg

        self.count += 1
        name = f"hub{self.count}"
        with psycopg.connect(f"postgresql://postgres@127.0.0.1:{self.port}/postgres", autocommit=True) as conn:
            conn.execute(f"CREATE DATABASE {name}")
        return f"postgresql://postgres@127.0.0.1:{self.port}/{name}"

    def stop(self) -> None:
        try:
            self._run("pg_ctl", "-D", str(self.data), "-m", "immediate", "-w", "stop")
        finally:
            shutil.rmtree(self.dir, ignore_errors=True)


def _pg_bindir() -> Path | None:
    found = shutil.which("pg_ctl")
    if found:
        return Path(os.path.realpath(found)).parent
    versions = sorted(Path("/usr/lib/postgresql").glob("*/bin/pg_ctl"))
    return versions[-1].parent if versions else None


@pytest.fixture(scope="session")
def pg_cluster():
    if _pg_bindir() is None:
        pytest.skip("PostgreSQL is not installed (scripts/setup.sh installs Debian's postgresql); SQLite cases ran")
    cluster = PgCluster().start()
    yield cluster
    cluster.stop()


def make_hub(request, backend: str, folder: Path) -> HubStore:
    """A fresh hub on SQLite (a file in ``folder``) or on a new database of the test cluster."""
    folder.mkdir(parents=True, exist_ok=True)
    if backend == "sqlite":
        return HubStore(folder / "hub.db")
    return HubStore(request.getfixturevalue("pg_cluster").new_database(), blob_dir=folder / "blobs")


@pytest.fixture(params=["sqlite", "postgresql"])
def hub(request, tmp_path):
    h = make_hub(request, request.param, tmp_path / "hub")
    yield h
    h.close()


@pytest.fixture
def served(hub):
    running = RunningHub(hub).start()
    yield running
    running.stop()
