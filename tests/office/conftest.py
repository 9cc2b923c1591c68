"""A real hub on 127.0.0.1 (uvicorn in a thread, on a free port) and enrolled tablets."""

from __future__ import annotations

import socket
import threading
import time

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


@pytest.fixture
def hub(tmp_path):
    (tmp_path / "hub").mkdir()
    h = HubStore(tmp_path / "hub" / "hub.db")
    yield h
    h.close()


@pytest.fixture
def served(hub):
    running = RunningHub(hub).start()
    yield running
    running.stop()
