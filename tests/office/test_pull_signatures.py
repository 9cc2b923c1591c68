"""Over HTTP: a tablet learns the enrolled devices' keys from the hub and verifies every pulled op by them.

An op whose signature the hub's log no longer matches (a damaged or altered hub database) is set aside
on the tablet, not applied, and the Sync screen's view model says so in words.
"""

import json

from mobile.hub_client import sync
from mobile.viewmodels.sync import SyncViewModel
from storage import identity
from storage.identity import DEMO_ORIGIN
from tests.core.beams import glulam


def test_pulled_op_whose_signature_fails_is_set_aside_and_shown(served, tmp_path, monkeypatch):
    monkeypatch.setattr(identity, "trusted_key", identity.trusted_key.__wrapped__)  # only the hub's list
    a = served.tablet(tmp_path / "a.db", name="Tablet A")
    b = served.tablet(tmp_path / "b.db", name="Tablet B")
    site = a.create_site(name="Signed over HTTP")
    a.save_beam(site.id, glulam())
    sync(a)
    assert {d.device_id for d in identity.trusted_devices(b.db)} == {a.device_id, b.device_id}
    forged = identity.sign_op(identity.new_private_key(), _op(served.hub, a.device_id, 2))
    with served.hub.tx():
        served.hub.db.execute("UPDATE hub_log SET sig=? WHERE origin=? AND seq=2", [forged, a.device_id])
    result = sync(b)
    assert result.pulled_new == 1  # the site; the beam is set aside
    assert b.db.execute("SELECT count(*) FROM beam").fetchone()[0] == 0
    words = SyncViewModel(b).set_aside()
    assert len(words) == 1
    assert words[0].startswith("beam ")
    assert "not applied" in words[0]


def _op(hub, origin, seq):
    from storage.oplog import OP_KEYS, Op

    row = hub.db.execute(f"SELECT {', '.join(OP_KEYS)} FROM op WHERE origin=? AND seq=?", [origin, seq]).fetchone()
    return Op.from_row(dict(zip(OP_KEYS, row, strict=True)))


def test_first_push_after_the_demo_carries_no_demo_record(served, tmp_path):
    from mobile.demo.run import load_demo

    t = served.tablet(tmp_path / "t.db")
    load_demo(t)  # the app's first run
    real = t.create_site(name="Real job")
    result = sync(t)
    assert result.pushed == 1
    assert [json.loads(row[1])["name"] for row in served.hub.projections()["site"]] == ["Real job"]
    assert served.hub.db.execute("SELECT count(*) FROM op WHERE origin=?", [DEMO_ORIGIN]).fetchone()[0] == 0
    assert t.pending_sync_count("hub") == 0
    assert real.id in {row[0] for row in served.hub.projections()["site"]}
