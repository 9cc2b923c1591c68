"""Run the hub in a background thread on a loopback port (the demo; also handy for tools)."""

from __future__ import annotations

import socket
import subprocess
import sys
import tempfile
import threading
import time
import urllib.request
from typing import IO

import uvicorn

from office.app import create_app
from office.hubstore import HubStore
from office.pgha import free_port

# generous: a worker answers in ~1 s alone, but took 20 s on a 2-core machine at load average 22
# (measured: python + fastapi + psycopg imports); the wait ends as soon as it answers or exits
STARTUP_S = 300.0
PORT_ATTEMPTS = 5


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

    def start(self, timeout_s: float = 60.0) -> BackgroundHub:
        """Start serving; RuntimeError if the server has not started within ``timeout_s``.

        Generous (uvicorn imports its protocol modules as it starts, slow on a loaded machine); the
        wait ends as soon as the server has started.
        """
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
        self.chosen = not port  # a port we picked may be taken by someone else before the worker binds it
        self.port = port or free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.dbs = dbs
        self.proc: subprocess.Popen[bytes] | None = None
        self.errors: IO[bytes] | None = None  # the worker's stderr (its warnings and errors)

    def start(self, timeout_s: float = STARTUP_S) -> HubProcess:
        """Start the process and wait until it answers ``/v1/hub``; RuntimeError (with its stderr) if it does not.

        If the port we picked was taken meanwhile (another program bound it between our choice and the
        worker's bind), the worker exits at once: it is started again on a fresh port, a few times.
        """
        for _attempt in range(PORT_ATTEMPTS):
            if self._start_once(timeout_s):
                return self
            self.port = free_port()
            self.url = f"http://127.0.0.1:{self.port}"
        msg = f"hub worker: every one of {PORT_ATTEMPTS} free ports was taken before it could bind"
        raise RuntimeError(msg)

    def _start_once(self, timeout_s: float) -> bool:
        """True once the worker answers; False if it lost its (chosen) port; RuntimeError otherwise."""
        args = [sys.executable, "-m", "mobile.cli", "hub", "serve", "--port", str(self.port)]
        for db in self.dbs:
            args += ["--db", db]
        if self.errors is not None:  # an earlier attempt's
            self.errors.close()
        # a file, not a pipe: a chatty worker never blocks on it; closed by stop() (or the next attempt)
        self.errors = tempfile.TemporaryFile()  # noqa: SIM115
        self.proc = subprocess.Popen(args, stdout=subprocess.DEVNULL, stderr=self.errors)
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                stderr = self.stderr()
                if self.chosen and "address already in use" in stderr.lower():
                    return False
                msg = f"hub worker on port {self.port} exited with {self.proc.returncode}: {stderr}"
                raise RuntimeError(msg)
            try:
                with urllib.request.urlopen(f"{self.url}/v1/hub", timeout=2):
                    return True
            except OSError:
                time.sleep(0.1)
        stderr = self.stderr()
        self.stop()
        msg = f"hub worker on port {self.port} did not answer within {timeout_s} s: {stderr}"
        raise RuntimeError(msg)

    def stderr(self) -> str:
        """What the worker wrote to stderr so far (the last 4,000 characters)."""
        if self.errors is None:
            return ""
        self.errors.seek(0)
        return self.errors.read().decode(errors="replace")[-4000:]

    def stop(self) -> None:
        """Stop the process (SIGTERM, then SIGKILL after 10 s) and close its stderr file."""
        if self.proc is not None and self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=10)
        if self.errors is not None:
            self.errors.close()
            self.errors = None
