"""Run the hub in a background thread on a loopback port (the demo; also handy for tools)."""

from __future__ import annotations

import socket
import subprocess
import sys
import threading
import time
import urllib.request

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
        msg = f"the hub did not start within {timeout_s} s"
        raise RuntimeError(msg)

    def stop(self) -> None:
        """Stop serving and release the port."""
        self.server.should_exit = True
        self.thread.join(timeout=10)
        self.sock.close()


class HubProcess:
    """One ``bracewalk hub serve`` worker process on 127.0.0.1 (tests, the benchmark, drills).

    Several of these on the same PostgreSQL are the stateless hub workers of sync.md 4 (S2); ``dbs``
    lists the database addresses (a primary and its standbys), the worker follows the writable one.
    """

    def __init__(self, dbs: list[str], port: int = 0):
        """Choose a free port (or the one given); nothing starts yet."""
        if not port:
            with socket.socket() as s:
                s.bind(("127.0.0.1", 0))
                port = int(s.getsockname()[1])
        self.port = port
        self.url = f"http://127.0.0.1:{port}"
        self.dbs = dbs
        self.proc: subprocess.Popen[bytes] | None = None

    def start(self, timeout_s: float = 30.0) -> HubProcess:
        """Start the process and wait until it answers ``/v1/hub``; RuntimeError if it does not in time."""
        args = [sys.executable, "-m", "mobile.cli", "hub", "serve", "--port", str(self.port)]
        for db in self.dbs:
            args += ["--db", db]
        self.proc = subprocess.Popen(args, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                msg = f"hub worker on port {self.port} exited with {self.proc.returncode}"
                raise RuntimeError(msg)
            try:
                with urllib.request.urlopen(f"{self.url}/v1/hub", timeout=2):
                    return self
            except OSError:
                time.sleep(0.1)
        self.stop()
        msg = f"hub worker on port {self.port} did not answer within {timeout_s} s"
        raise RuntimeError(msg)

    def stop(self) -> None:
        """Stop the process (SIGTERM, then SIGKILL after 10 s)."""
        if self.proc is None or self.proc.poll() is not None:
            return
        self.proc.terminate()
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait(timeout=10)
