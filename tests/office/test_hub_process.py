"""``office.background.HubProcess``: a hub worker process that tests, the benchmark and drills start.

A port found free by binding port 0 and letting it go can be taken by another program before the
worker binds it (common practice: the check and the use are two steps, so the answer can be stale);
on a machine running several test suites at once that happens. The worker then exits with "address
already in use", and HubProcess starts it again on a fresh port; a port given by the caller is
never changed, and the refusal names the cause.
"""

from __future__ import annotations

import json
import socket
import urllib.request

import pytest

from office.background import HubProcess
from office.hubstore import HubStore


@pytest.fixture
def hub_db(tmp_path):
    HubStore(tmp_path / "hub.db").close()  # created and migrated once, as ``hub serve`` expects
    return str(tmp_path / "hub.db")


def _occupy(port: int) -> socket.socket:
    s = socket.socket()
    s.bind(("127.0.0.1", port))
    s.listen()
    return s


def test_a_chosen_port_taken_before_the_worker_binds_it_is_replaced_by_a_fresh_one(hub_db):
    worker = HubProcess([hub_db])
    taken = worker.port
    with _occupy(taken):
        worker.start()
        try:
            assert worker.port != taken
            with urllib.request.urlopen(f"{worker.url}/v1/hub", timeout=60) as resp:
                assert "hub_id" in json.loads(resp.read())
        finally:
            worker.stop()


def test_a_port_given_by_the_caller_and_taken_is_an_error_naming_the_cause(hub_db):
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        port = int(probe.getsockname()[1])
    with _occupy(port):
        worker = HubProcess([hub_db], port=port)
        with pytest.raises(RuntimeError, match=rf"port {port} exited with .*address already in use"):
            worker.start()
        worker.stop()
