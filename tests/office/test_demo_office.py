"""``bracewalk demo`` runs the office side too; ``--serve`` keeps the register open with a demo login."""

import re
import signal
import subprocess
import sys
from pathlib import Path

import httpx

ROOT = Path(__file__).resolve().parents[2]


def test_demo_serve_prints_the_register_address_and_a_login_that_works(tmp_path):
    proc = subprocess.Popen(
        [sys.executable, "-m", "mobile.cli", "demo", "--out", str(tmp_path / "d"), "--serve"],
        cwd=ROOT,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    try:
        lines = []
        for _ in range(200):  # bounded: the demo prints a few dozen lines
            line = proc.stdout.readline()
            if not line:
                break
            lines.append(line)
            if line.startswith("office register:"):
                break
        text = "".join(lines)
        assert "tablet and hub digests equal" in text
        found = re.search(
            r"office register: (http://127\.0\.0\.1:\d+)/  log in as 'demo' with password '([^']+)'", text
        )
        assert found, text
        url, password = found.groups()
        with httpx.Client(base_url=url, timeout=20) as client:
            assert client.get("/", follow_redirects=False).status_code == 303
            r = client.post("/login", data={"name": "demo", "password": password}, follow_redirects=False)
            client.cookies.set("bw_session", r.cookies["bw_session"])
            assert "Cedar Hollow" in client.get("/").text
    finally:
        proc.send_signal(signal.SIGINT)
        proc.communicate(timeout=30)
