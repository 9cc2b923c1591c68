"""The office side of the demo: a hub on a free local port, the demo tablet enrolled and synced over HTTP."""

from __future__ import annotations

import secrets
import shutil
import time
from pathlib import Path

from mobile.hub_client import enroll, sync
from storage import Store
from storage.identity import DEMO_ORIGIN, demo_key, public_text

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
            print(line)
            print(f"office register: {running.url}/  log in as {DEMO_USER!r} with password {password!r}")
            print("serving until Ctrl-C")
            try:
                while running.thread.is_alive():
                    time.sleep(0.5)
            except KeyboardInterrupt:
                pass
        return line
    finally:
        running.stop()
        hub.close()
