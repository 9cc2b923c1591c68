"""The office side of the demo: a hub on a free local port, the demo tablet enrolled and synced over HTTP."""

from __future__ import annotations

import secrets
import shutil
import signal
import threading
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from types import FrameType
from typing import TYPE_CHECKING

from mobile.hub_client import enroll, sync
from storage import Store
from storage.identity import DEMO_ORIGIN, demo_key, public_text

if TYPE_CHECKING:
    from office.background import BackgroundHub

DEMO_USER = "demo"


def office_demo(store: Store, out: Path, serve: bool = False) -> str:
    """Enrol and sync the demo tablet with a fresh hub in ``out``; the summary line (and serve on if asked)."""
    from office import registry
    from office.background import BackgroundHub
    from office.hubstore import HubStore

    for old in (out / "hub.db", out / "hub.db-wal", out / "hub.db-shm"):
        old.unlink(missing_ok=True)
    shutil.rmtree(out / "hub-blobs", ignore_errors=True)
    hub = HubStore(out / "hub.db")
    running = BackgroundHub(hub).start()
    try:
        enroll(store, running.url, hub.new_code("Demo tablet", "Demo reviewer", "reviewer"))
        # the demo site's changes carry the demo's own origin and marked key: this throwaway hub knows it
        code = hub.new_code("Demo site (marked demo key)", "Demo reviewer", "reviewer")
        hub.enroll(code, DEMO_ORIGIN, public_text(demo_key()))
        result = sync(store, include_demo=True)
        same = hub.digest() == store.digest()
        line = (
            f"office hub: demo tablet enrolled and synced over HTTP ({result.pushed} changes, "
            f"{result.blobs_sent} files); tablet and hub digests {'equal' if same else 'DIFFER'}"
        )
        if serve:
            password = secrets.token_urlsafe(9)
            registry.add_user(hub, DEMO_USER, password)
            _serve_until_stopped(running, line, password)
        return line
    finally:
        running.stop()
        hub.close()


def _serve_until_stopped(running: BackgroundHub, line: str, password: str) -> None:
    """Print the register's address and the demo login, then serve until SIGINT/SIGTERM (or the server ends)."""
    # the handlers go in before the address is printed: whoever reads it may stop us at once
    with stop_signals() as stopped:
        # flushed: when the output is a pipe (a script, ``| tee``) the address must show now
        print(line, flush=True)
        address = f"office register: {running.url}/  log in as {DEMO_USER!r} with password {password!r}"
        print(address, flush=True)
        print("serving until Ctrl-C (or SIGTERM)", flush=True)
        while running.thread.is_alive() and not stopped.wait(0.5):
            pass


@contextmanager
def stop_signals() -> Iterator[threading.Event]:
    """An event set by SIGINT (Ctrl-C) or SIGTERM while the block runs; the previous handlers are put back after.

    Installed explicitly rather than relying on Python's KeyboardInterrupt: a process started in the
    background of a non-interactive shell inherits SIGINT as *ignored*, and Python then never installs
    its handler, so Ctrl-C (or ``kill -INT``) would leave the server running. SIGTERM's default
    would end the process without stopping the hub and closing its database. Main thread only.
    """
    stopped = threading.Event()

    def on_signal(_signum: int, _frame: FrameType | None) -> None:
        stopped.set()

    previous = {sig: signal.signal(sig, on_signal) for sig in (signal.SIGINT, signal.SIGTERM)}
    try:
        yield stopped
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, handler)
