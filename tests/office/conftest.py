"""A real hub on 127.0.0.1 (uvicorn in a thread, on a free port) and enrolled tablets."""

from __future__ import annotations

import io
import logging
import threading
import time
import urllib.request
from pathlib import Path

import pytest

from mobile.hub_client import enroll
from office.background import STARTUP_S, BackgroundHub
from office.hubstore import HubStore
from office.pgha import PgServer, pg_bindir
from storage import Store


class RunningHub(BackgroundHub):
    """A hub store served over HTTP on a loopback port (``BackgroundHub``), and enrolled tablets.

    ``start`` polls readiness (``/v1/hub`` answers) up to ``STARTUP_S`` (300 s, as every other hub start:
    ~1 s alone, 20 s measured at load average 22 on 2 cores) and ends early if the server thread dies;
    a failure carries what the server logged (uvicorn's errors go to its logger, not a process stderr)
    and the exception that ended the thread.
    """

    def __init__(self, hub: HubStore):
        super().__init__(hub)
        self.errors = io.StringIO()
        self.died: BaseException | None = None
        self.thread = threading.Thread(target=self._run, daemon=True)

    def _run(self) -> None:
        try:
            self.server.run(sockets=[self.sock])
        except BaseException as exc:  # kept, and raised by start() or stop() in the test's thread
            self.died = exc

    def start(self, timeout_s: float = STARTUP_S) -> RunningHub:
        handler = logging.StreamHandler(self.errors)
        logger = logging.getLogger("uvicorn.error")
        logger.addHandler(handler)
        try:
            self.thread.start()
            deadline = time.monotonic() + timeout_s
            while self.thread.is_alive() and time.monotonic() < deadline:
                if self.server.started and self._answers():
                    return self
                time.sleep(0.05)
        finally:
            logger.removeHandler(handler)
        why = "its thread ended" if not self.thread.is_alive() else f"no answer within {timeout_s} s"
        msg = f"hub at {self.url} did not start ({why}): {self.died!r}; logged: {self.errors.getvalue()[-4000:]!r}"
        died, self.died = self.died, None
        self.stop()
        raise RuntimeError(msg) from died

    def _answers(self) -> bool:
        try:
            with urllib.request.urlopen(f"{self.url}/v1/hub", timeout=2):
                return True
        except OSError:
            return False

    def stop(self) -> None:
        """Stop serving; RuntimeError if the server thread had ended on an exception meanwhile."""
        super().stop()
        if self.died is not None:
            msg = f"hub at {self.url} ended on {self.died!r}"
            raise RuntimeError(msg) from self.died

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


@pytest.fixture(autouse=True)
def _collect_after_each_test():
    """Collect cyclic garbage after each test, so a connection left open warns (and fails) in the test that left it.

    Without this the warning came from whatever later test happened to trigger a collection (twice in CI,
    under load, in the failover and load tests, whose own connections are all closed).
    """
    yield
    import gc

    gc.collect()
