"""Record schema versions: what one app version writes, another holds rather than refuses or misreads.

Every op carries the record schema its app wrote (``storage.db.SCHEMA_VERSION``). A bundle of a newer
schema is held whole until the app is updated (tests/storage/test_sync.py); here: the ledger that forces a
new version with every change to a synced record's shape, and a pulled page holding an op of a newer schema
(the ops before it applied, the cursor kept before it). A pulled op whose record fails the checks of a local
save is set aside like one whose signature fails.
"""

import dataclasses
from pathlib import Path

import pytest

from storage import Store, identity
from storage.db import SCHEMA_VERSION
from storage.hubsync import apply_page, first_newer_schema, hub_cursor, pull_quarantine, pull_quarantine_words
from storage.oplog import all_ops
from storage.validate import record_schema_fingerprint
from tests.core.beams import glulam
from tests.storage.signing import introduce
from tests.storage.test_pull_verify import _page, strict  # noqa: F401 (strict: an autouse fixture)

LEDGER = Path(__file__).with_name("record_schemas.txt")  # "<SCHEMA_VERSION> <record_schema_fingerprint()>"


def test_record_shapes_are_the_ones_written_under_this_schema_version():
    """A field added, removed or re-bounded in a synced record needs a new SCHEMA_VERSION and ledger line.

    Otherwise an app of the previous version would take the new records as its own and refuse (or misread)
    them; with a new version it holds them until it is updated.
    """
    held = dict(line.split() for line in LEDGER.read_text(encoding="utf-8").splitlines() if line.strip())
    assert str(SCHEMA_VERSION) in held, f"add '{SCHEMA_VERSION} {record_schema_fingerprint()}' to {LEDGER.name}"
    assert held[str(SCHEMA_VERSION)] == record_schema_fingerprint(), (
        "a synced record's shape changed: bump storage.db.SCHEMA_VERSION and add its line to the ledger"
    )


def _resigned(store, op, **changes):
    """``op`` changed as given and signed again by ``store``'s device key (an enrolled device's own op)."""
    new = dataclasses.replace(op, **changes)
    return new, identity.sign_op(identity.device_key(store.db), new)


@pytest.fixture
def colleague(tmp_path):
    a = Store(tmp_path / "a.db")
    site = a.create_site(name="Pulled")
    a.save_beam(site.id, glulam())
    a.save_beam(site.id, glulam(mark="B-2"))
    return a


def test_a_pulled_op_of_a_newer_schema_stops_the_page_before_it(tmp_path, colleague):
    ops = all_ops(colleague.db)  # site, beam B-1, beam B-2
    key = identity.device_key(colleague.db)
    signed = [(op, identity.sign_op(key, op)) for op in ops[:2]]
    signed.append(_resigned(colleague, ops[2], schema_version=SCHEMA_VERSION + 1))
    t = Store(tmp_path / "t.db")
    introduce(t, colleague)
    page = _page(signed)
    assert first_newer_schema(page) == 2
    assert apply_page(t, page, now_ms=1) == 2  # the site and the first beam
    assert hub_cursor(t) == page["ops"][1]["hub_seq"]  # the next pull starts at the held op again
    assert [rec["mark"] for _, rec in t.beams(t.sites()[0].id)] == ["T-1"]  # glulam()'s default mark
    assert pull_quarantine(t) == []  # held for a newer app, not set aside


def test_a_page_that_opens_with_a_newer_op_applies_nothing_and_keeps_the_cursor(tmp_path, colleague):
    (op, *_) = all_ops(colleague.db)
    t = Store(tmp_path / "t.db")
    introduce(t, colleague)
    assert apply_page(t, _page([_resigned(colleague, op, schema_version=SCHEMA_VERSION + 1)]), now_ms=1) == 0
    assert hub_cursor(t) == 0
    assert t.sites() == []


def test_a_pulled_op_whose_record_a_local_save_refuses_is_set_aside(tmp_path, colleague):
    """Signed by an enrolled device, yet its beam is 5 mm wide (below the plausible 19 mm): never applied."""
    ops = all_ops(colleague.db)
    key = identity.device_key(colleague.db)
    bad = _resigned(colleague, ops[1], payload=dict(ops[1].payload, b_mm=5.0))
    t = Store(tmp_path / "t.db")
    introduce(t, colleague)
    assert apply_page(t, _page([(ops[0], identity.sign_op(key, ops[0])), bad]), now_ms=1) == 1
    (q,) = pull_quarantine(t)
    assert q["reason"].startswith("its record fails the checks of a local save")
    assert "b_mm" in q["reason"]
    (words,) = pull_quarantine_words(t)
    assert "set aside, not applied, because its record fails" in words
    assert t.beams(t.sites()[0].id) == []
