"""``bracewalk hub serve`` starts on an embedded SQLite with nothing but the project installed."""

import json
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

from office.app import create_app
from office.hubstore import HubStore

ROOT = Path(__file__).resolve().parents[2]


def test_hub_serve_starts_answers_hello_and_stops(tmp_path):
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    proc = subprocess.Popen(
        [sys.executable, "-m", "mobile.cli", "hub", "serve", "--db", str(tmp_path / "hub.db"), "--port", str(port)],
        cwd=ROOT,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    try:
        hello = None
        for _ in range(100):  # bounded: 20 s
            try:
                with urllib.request.urlopen(f"http://127.0.0.1:{port}/v1/hub", timeout=2) as resp:
                    hello = json.loads(resp.read())
                break
            except OSError:
                time.sleep(0.2)
        assert hello is not None, proc.stderr.read() if proc.poll() is not None else "no answer"
        hub = HubStore(tmp_path / "hub.db")
        assert hello["hub_id"] == hub.hub_id
        hub.close()
    finally:
        proc.terminate()
        out, err = proc.communicate(timeout=20)
    assert f"127.0.0.1:{port}" in out


def test_openapi_document_lists_every_protocol_call(tmp_path):
    hub = HubStore(tmp_path / "hub.db")
    doc = create_app(hub).openapi()
    hub.close()
    assert set(doc["paths"]) == {
        "/v1/hub",
        "/v1/enroll",
        "/v1/blobs/missing",
        "/v1/blobs/{sha256}",
        "/v1/push",
        "/v1/pull",
        "/v1/snapshot",
    }
    assert {"put", "get"} <= set(doc["paths"]["/v1/blobs/{sha256}"])
