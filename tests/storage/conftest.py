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
    """Run every test function of the sync modules with each library (``json_library`` is autouse, so listed)."""
    if metafunc.module.__name__.rsplit(".", 1)[-1] in SYNC_MODULES:
        metafunc.parametrize("json_library", ["orjson", "stdlib"], indirect=True)


@pytest.fixture(autouse=True)
def json_library(request, monkeypatch):
    """Which JSON library storage.fastjson uses for this run of the test (as installed outside the sync modules).

    Autouse: a fixture only named in ``metafunc.fixturenames`` from ``pytest_generate_tests`` is given
    its parameter but never set up (pytest 9), so the "stdlib" runs used orjson all the same.
    """
    library = getattr(request, "param", None)
    if library is None:
        return "orjson" if fastjson.ORJSON is not None else "stdlib"
    if library == "stdlib":
        monkeypatch.setattr(fastjson, "ORJSON", None)
    elif fastjson.ORJSON is None:
        pytest.skip("orjson is not installed")
    return library
