"""Run the hub in a background thread on a loopback port (the demo; also handy for tools)."""

from __future__ import annotations

import socket
import threading
import time

import uvicorn

from office.app import create_app
from office.hubstore import HubStore


class BackgroundHub:
    """A hub served by uvicorn in a daemon thread on 127.0.0.1 and a free port (or the one given)."""

    def __init__(self, hub: HubStore, port: int = 0):
        """Bind the port now, so the address is known before the server starts."""
        self.hub = hub
        self.sock = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
        self.sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self.sock.bind(("127.0.0.1", port))
        self.url = f"http://127.0.0.1:{self.sock.getsockname()[1]}"
        self.server = uvicorn.Server(uvicorn.Config(create_app(hub), log_level="error", lifespan="off"))
        self.thread = threading.Thread(target=self.server.run, kwargs={"sockets": [self.sock]}, daemon=True)

    def start(self, timeout_s: float = 10.0) -> BackgroundHub:
        """Start serving; RuntimeError if the server has not started within ``timeout_s``."""
        self.thread.start()
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            if self.server.started:
                return self
            time.sleep(0.05)
        raise RuntimeError(f"the hub did not start within {timeout_s} s")

    def stop(self) -> None:
        """Stop serving and release the port."""
        self.server.should_exit = True
        self.thread.join(timeout=10)
        self.sock.close()
