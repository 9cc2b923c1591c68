"""A real hub on 127.0.0.1 (uvicorn in a thread, on a free port) and enrolled tablets."""

from __future__ import annotations

import socket
import threading
import time
from pathlib import Path

import pytest
import uvicorn

from mobile.hub_client import enroll
from office.app import create_app
from office.hubstore import HubStore
from office.pgha import PgServer, pg_bindir
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
        msg = "hub did not start"
        raise RuntimeError(msg)

    def stop(self) -> None:
        self.server.should_exit = True
        self.thread.join(timeout=10)
        self.sock.close()

    def tablet(self, path, name="Tablet", person="A. Reviewer", role="reviewer") -> Store:
        store = Store(path)
        enroll(store, self.url, self.hub.new_code(name, person, role))
        return store


class PgCluster:
    """A throwaway PostgreSQL server (office.pgha) in a temporary folder, on a free port of 127.0.0.1."""

    def __init__(self):
        self.server = PgServer(durable=False)
        self.port = self.server.port
        self.count = 0

    def start(self) -> PgCluster:
        self.server.init(("synchronous_commit = off",)).start()
        return self

    def new_database(self) -> str:
        self.count += 1
        return self.server.create_database(f"hub{self.count}")

    def stop(self) -> None:
        self.server.remove()


@pytest.fixture(scope="session")
def pg_cluster():
    if pg_bindir() is None:
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
