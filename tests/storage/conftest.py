"""The sync tests run twice: with ``orjson`` (storage.fastjson) and with the standard library only.

A tablet's build may lack the compiled library; then import reads and writes JSON with ``json``
alone, and every sync test must hold that way too. Each test function of the modules below is
parametrised by ``json_library`` (a unittest-style class, the stateful replica test, runs once, as
installed).
"""

import pytest

from storage import fastjson

SYNC_MODULES = {
    "test_sync",
    "test_sync_pipeline",
    "test_sync_scale",
    "test_bundle_trust",
    "test_import_report",
    "test_fastjson",
}


def pytest_generate_tests(metafunc):
    """Add ``json_library`` to every test of the sync modules."""
    if metafunc.module.__name__.rsplit(".", 1)[-1] in SYNC_MODULES and "json_library" not in metafunc.fixturenames:
        metafunc.fixturenames.append("json_library")
        metafunc.parametrize("json_library", ["orjson", "stdlib"], indirect=True)


@pytest.fixture
def json_library(request, monkeypatch):
    """Which JSON library storage.fastjson uses for this run of the test."""
    library = getattr(request, "param", "orjson")
    if library == "stdlib":
        monkeypatch.setattr(fastjson, "ORJSON", None)
    elif fastjson.ORJSON is None:
        pytest.skip("orjson is not installed")
    return library
