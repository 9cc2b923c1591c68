"""``bracewalk demo`` runs the office side too; ``--serve`` keeps the register open with a demo login.

The demo is a child process: its output is read by a thread and waited for with a generous deadline
(a loaded machine may take minutes), and it is always stopped, its whole process group killed if a
polite stop fails, so a failing run leaves no server behind.
"""

from __future__ import annotations

import os
import queue
import re
import signal
import subprocess
import sys
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import httpx
import pytest

ROOT = Path(__file__).resolve().parents[2]
READY_S = 600.0  # bounded, generous: the demo takes ~2 s alone, tens of seconds on a loaded 2-core machine
STOP_S = 120.0  # a polite stop (SIGINT/SIGTERM) must end the demo within this
FINISHED = re.compile(r"\(\d+\.\d s\) ")  # the demo's last line, printed once the office demo has returned
REGISTER = re.compile(r"office register: (http://127\.0\.0\.1:\d+)/  log in as 'demo' with password '([^']+)'")


class Demo:
    """A running ``bracewalk demo --serve``: its stdout lines as they come, its stderr in a file."""

    def __init__(self, proc: subprocess.Popen[str], stderr_path: Path):
        self.proc = proc
        self.stderr_path = stderr_path
        self.lines: list[str] = []
        self._queue: queue.Queue[str | None] = queue.Queue()
        self.reader = threading.Thread(target=self._read, daemon=True)
        self.reader.start()

    def _read(self) -> None:
        assert self.proc.stdout is not None
        for line in self.proc.stdout:
            self._queue.put(line)
        self._queue.put(None)  # end of output

    def wait_for(self, pattern: re.Pattern[str], deadline_s: float = READY_S) -> re.Match[str]:
        """The first output line matching ``pattern``; fails with the output so far if it exits or time runs out."""
        deadline = time.monotonic() + deadline_s
        while time.monotonic() < deadline:
            try:
                line = self._queue.get(timeout=0.5)
            except queue.Empty:
                continue
            if line is None:
                pytest.fail(f"the demo ended ({self.proc.wait()}) without {pattern.pattern!r}:\n{self.output()}")
            self.lines.append(line)
            found = pattern.search(line)
            if found:
                return found
        pytest.fail(f"no {pattern.pattern!r} from the demo within {deadline_s} s:\n{self.output()}")

    def stop_with(self, sig: signal.Signals) -> int:
        """Send ``sig`` to the demo alone; its exit code (fails if it is still running after STOP_S)."""
        self.proc.send_signal(sig)
        try:
            return self.proc.wait(timeout=STOP_S)
        except subprocess.TimeoutExpired:
            pytest.fail(f"the demo did not stop within {STOP_S} s of {sig.name}:\n{self.output()}")

    def rest_of_output(self) -> str:
        """Every line up to the end of the output (call once the process has ended)."""
        while (line := self._queue.get(timeout=STOP_S)) is not None:
            self.lines.append(line)
        return "".join(self.lines)

    def output(self) -> str:
        return "".join(self.lines) + "\n--- stderr:\n" + self.stderr_path.read_text(errors="replace")


@contextmanager
def demo_serve(tmp_path: Path, ignore_sigint: bool = False) -> Iterator[Demo]:
    """Start ``bracewalk demo --serve`` in its own process group; on the way out kill the group if still running.

    ``ignore_sigint``: start it the way a non-interactive shell starts a background job, with SIGINT
    ignored (bash manual, "Signals": background commands of a non-interactive shell ignore SIGINT and
    SIGQUIT; POSIX exec: signals set to be ignored stay ignored in the new program).
    """
    args = [sys.executable, "-m", "mobile.cli", "demo", "--out", str(tmp_path / "d"), "--serve"]
    if ignore_sigint:
        args = ["sh", "-c", 'trap "" INT; exec "$@"', "sh", *args]
    stderr_path = tmp_path / "demo-stderr.txt"
    with stderr_path.open("w") as err:
        proc = subprocess.Popen(args, cwd=ROOT, stdout=subprocess.PIPE, stderr=err, text=True, start_new_session=True)
    demo = Demo(proc, stderr_path)
    try:
        yield demo
    finally:
        _kill_group_if_running(proc)
        demo.reader.join(timeout=STOP_S)  # the output ends with the process: the reader is done with it
        if proc.stdout is not None:
            proc.stdout.close()


def _kill_group_if_running(proc: subprocess.Popen[str]) -> None:
    """SIGTERM the process group, then SIGKILL it if that does not end the demo within 10 s."""
    for sig, wait_s in ((signal.SIGTERM, 10), (signal.SIGKILL, 30)):
        if proc.poll() is not None:
            break
        try:
            os.killpg(proc.pid, sig)
        except ProcessLookupError:
            break
        try:
            proc.wait(timeout=wait_s)
        except subprocess.TimeoutExpired:
            continue


def test_demo_serve_prints_the_register_address_and_a_login_that_works(tmp_path):
    with demo_serve(tmp_path) as demo:
        found = demo.wait_for(REGISTER)
        assert any("tablet and hub digests equal" in line for line in demo.lines), demo.output()
        url, password = found.groups()
        with httpx.Client(base_url=url, timeout=120) as client:
            assert client.get("/", follow_redirects=False).status_code == 303
            r = client.post("/login", data={"name": "demo", "password": password}, follow_redirects=False)
            client.cookies.set("bw_session", r.cookies["bw_session"])
            assert "Cedar Hollow" in client.get("/").text
        # Ctrl-C ends it cleanly: the demo unwinds (hub stopped, databases closed) and prints its last line
        assert demo.stop_with(signal.SIGINT) == 0, demo.output()
        assert FINISHED.match(demo.rest_of_output().splitlines()[-1]), demo.output()


@pytest.mark.parametrize(
    ("sig", "ignore_sigint"),
    [(signal.SIGINT, True), (signal.SIGTERM, False)],
    ids=["sigint-inherited-ignored", "sigterm"],
)
def test_demo_serve_stops_cleanly_on_sigint_even_if_started_ignoring_it_and_on_sigterm(tmp_path, sig, ignore_sigint):
    with demo_serve(tmp_path, ignore_sigint=ignore_sigint) as demo:
        demo.wait_for(REGISTER)
        assert demo.stop_with(sig) == 0, demo.output()
        assert FINISHED.match(demo.rest_of_output().splitlines()[-1]), demo.output()
