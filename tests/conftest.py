"""Suite-wide setup.

A fresh install makes its own random bundle key, so two test databases could not exchange file
bundles; the suite gives every database it creates one test key (the environment variable a firm
sets for the same purpose). Tests of the per-install key unset it themselves.
"""

import os

os.environ.setdefault("BRACEWALK_FIRM_KEY", "bracewalk-test-suite-key-tests-only")


# Tablets learn each other's public keys from the office hub. The suite's databases have no hub, so
# each one trusts the keys of the databases this test process made, as if one hub listed them all
# (only for devices it has not been told about; a revoked device stays refused). Tests of trust itself
# use the real lookup: ``monkeypatch.setattr(identity, "trusted_key", identity.trusted_key.__wrapped__)``.
import storage.identity as _identity

_SUITE_KEYS: dict[str, object] = {}
_real_device_key = _identity.device_key
_real_trusted_key = _identity.trusted_key


def _suite_device_key(db):
    key = _real_device_key(db)
    _SUITE_KEYS[_identity.own_device_id(db)] = key.public_key()
    return key


def _suite_trusted_key(db, device_id, allow_revoked=False):
    try:
        return _real_trusted_key(db, device_id, allow_revoked)
    except _identity.UnknownDevice:
        if device_id in _SUITE_KEYS:
            return _SUITE_KEYS[device_id]
        raise


_suite_trusted_key.__wrapped__ = _real_trusted_key
_identity.device_key = _suite_device_key
_identity.trusted_key = _suite_trusted_key


# The README test (tests/test_readme_commands.py) runs the README's test command once more in a fresh copy of
# the project. There the slow tests (the bench smoke run, the golden campaigns: about 4 minutes) are skipped:
# the outer run has just run them on the same files, and CI's time is bounded (90 minutes).
README_NESTED = "BRACEWALK_README_NESTED"


def pytest_collection_modifyitems(config, items):  # noqa: ARG001 (pytest's hook signature)
    """In the README test's nested run, skip the tests marked slow (run by the outer run)."""
    if os.environ.get(README_NESTED) != "1":
        return
    import pytest

    skip = pytest.mark.skip(reason="slow: run by the outer run of the suite (this is the README test's nested run)")
    for item in items:
        if item.get_closest_marker("slow") is not None:
            item.add_marker(skip)
