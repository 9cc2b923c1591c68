"""The hub and a tablet of different record schemas: each holds what the other cannot read; nothing is lost.

And the hub checks every pushed record as a local save would (``storage.validate``): an enrolled device's
op with an invalid record is quarantined and reported back, like any rule's refusal.
"""

import dataclasses
import hashlib

import pytest

import office.app
from mobile.hub_client import sync
from mobile.viewmodels.sync import SyncViewModel
from office.hubstore import HubRefused
from storage import identity
from storage.clock import uuid7
from storage.db import SCHEMA_VERSION
from storage.oplog import all_ops
from tests.core.beams import glulam


def _signed(store, op):
    return op, identity.sign_op(identity.device_key(store.db), op)


def test_the_hub_refuses_a_push_of_a_newer_schema_whole(served, tmp_path):
    t = served.tablet(tmp_path / "t.db", "Tablet T")
    site = t.create_site(name="Newer")
    t.save_beam(site.id, glulam())
    ops = all_ops(t.db)
    newer = dataclasses.replace(ops[-1], schema_version=SCHEMA_VERSION + 1)
    before = served.hub.digest()
    with pytest.raises(HubRefused) as refused:
        served.hub.push(t.device_id, uuid7(), "0" * 64, [_signed(t, op) for op in ops[:-1]] + [_signed(t, newer)])
    assert refused.value.status == 409
    assert "update the office hub" in refused.value.reason
    assert served.hub.digest() == before  # nothing changed, not even the ops before it


def test_the_hub_quarantines_an_invalid_record_and_says_why(served, tmp_path):
    t = served.tablet(tmp_path / "t.db", "Tablet T")
    site = t.create_site(name="Invalid")
    t.save_beam(site.id, glulam())
    site_op, beam_op = all_ops(t.db)
    bad = dataclasses.replace(beam_op, payload=dict(beam_op.payload, spans_mm=[-3000.0]))
    body = hashlib.sha256(b"test push").hexdigest()
    answer = served.hub.push(t.device_id, uuid7(), body, [_signed(t, site_op), _signed(t, bad)])
    (rejected,) = answer.rejected
    assert rejected["seq"] == bad.seq
    assert rejected["reason"].startswith("invalid_record: ")
    assert "spans_mm" in rejected["reason"]
    assert served.hub.db.execute("SELECT count(*) FROM beam").fetchone()[0] == 0  # never merged
    assert len(served.hub.quarantine()) == 1  # kept, not dropped


def test_a_tablet_newer_than_its_hub_keeps_its_changes_and_still_receives(served, tmp_path, monkeypatch):
    colleague = served.tablet(tmp_path / "c.db", "Tablet C")
    site = colleague.create_site(name="From the office")
    colleague.save_beam(site.id, glulam())
    assert sync(colleague).in_step
    t = served.tablet(tmp_path / "t.db", "Tablet T")
    mine = t.create_site(name="Only here")
    monkeypatch.setattr(office.app, "SCHEMA_VERSION", SCHEMA_VERSION - 1)  # the hub runs the previous version
    result = sync(t)
    assert result.hub_schema_older == SCHEMA_VERSION - 1
    assert result.pushed == 0
    assert not result.in_step
    assert result.pulled_new == len(all_ops(colleague.db))  # received what the office holds
    assert served.hub.db.execute("SELECT count(*) FROM site WHERE id=?", [mine.id]).fetchone()[0] == 0
    assert t.site(mine.id).name == "Only here"  # kept on the tablet, sent once the hub is updated
    text = SyncViewModel(t).sync_now()
    assert "nothing was sent: the office hub runs an older bracewalk" in text
    monkeypatch.undo()
    assert sync(t).in_step
    assert served.hub.db.execute("SELECT count(*) FROM site WHERE id=?", [mine.id]).fetchone()[0] == 1
