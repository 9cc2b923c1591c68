"""The hub protocol (sync.md 3.9) over real HTTP on 127.0.0.1: hello, enrol, push, pull, blobs, snapshot."""

import json

from mobile.hub_client import request, sync
from storage.identity import enrolment
from tests.core.beams import glulam


def _work(store, name="Site A"):
    site = store.create_site(name=name)
    beam = store.save_beam(site.id, glulam())
    store.raise_deficiency(
        site.id, beam, "bearing_restraint_missing", "immediate", "B4", "no restraint", "cl. 7.5.6.4", "add blocking"
    )
    store.add_photo(site.id, b"\xff\xd8 photo bytes", beam_id=beam)
    return site, beam


def test_hello_gives_hub_id_time_and_schema_range(served):
    hello = json.loads(request(served.url, "GET", "/v1/hub"))
    assert hello["hub_id"] == served.hub.hub_id
    assert hello["schema_min"] <= hello["schema_max"]
    assert abs(hello["server_time_ms"] - served.hub.clock_ms()) < 60_000


def test_two_tablets_sync_through_the_hub_and_agree(served, tmp_path):
    a = served.tablet(tmp_path / "a.db", "Tablet A")
    b = served.tablet(tmp_path / "b.db", "Tablet B", "B. Tech", "technician")
    site, beam = _work(a)
    ra = sync(a)
    assert ra.in_step
    assert ra.pushed == a.db.execute("SELECT count(*) FROM op").fetchone()[0]
    assert ra.blobs_sent == 1
    rb = sync(b)
    assert rb.in_step
    assert rb.pulled_new == ra.pushed
    assert a.digest() == b.digest() == served.hub.digest()
    assert b.photos(site.id)[0]["pending"] is False  # the photo's bytes came from the hub
    b.update_beam(beam, {"b_mm": 175})
    sync(b)
    sync(a)
    assert a.beam(beam).b_mm == 175
    assert a.digest() == b.digest() == served.hub.digest()
    again = sync(a)
    assert again.pushed == 0
    assert again.pulled_new == 0  # in step: nothing to send or receive


def test_pull_pages_follow_hub_seq_without_holes(served, tmp_path):
    a = served.tablet(tmp_path / "a.db")
    site = a.create_site(name="Paged")
    for n in range(7):
        a.save_beam(site.id, glulam(), location={"mark": f"B{n}"})
    sync(a)
    auth = enrolment(a.db)
    cursor, seen = 0, []
    for _ in range(20):  # bounded
        page = json.loads(request(served.url, "GET", f"/v1/pull?cursor={cursor}&limit=3", auth=auth))
        seen += [o["hub_seq"] for o in page["ops"]]
        assert len(page["ops"]) <= 3
        cursor = page["next_cursor"]
        if not page["more"]:
            break
    assert seen == list(range(1, served.hub.hub_seq() + 1))


def test_push_is_idempotent_by_bundle_id(served, tmp_path):
    a = served.tablet(tmp_path / "a.db")
    _work(a)
    from storage.hubsync import outgoing

    auth = enrolment(a.db)
    out = outgoing(a, auth)
    body = json.dumps(
        {
            "bundle_id": "0190aaaa-bundle-1",
            "ops": [{"op": dict(op.row(), payload=op.payload, base=op.base), "sig": sig} for op, sig in out.ops],
        }
    ).encode()
    first = json.loads(request(served.url, "POST", "/v1/push", body, auth))
    state = served.hub.state_fingerprint()
    second = json.loads(request(served.url, "POST", "/v1/push", body, auth))
    assert first == second
    assert served.hub.state_fingerprint() == state


def test_snapshot_carries_projections_and_digest(served, tmp_path):
    a = served.tablet(tmp_path / "a.db")
    _work(a)
    sync(a)
    snap = json.loads(request(served.url, "GET", "/v1/snapshot", auth=enrolment(a.db)))
    assert snap["digest"] == a.digest()
    assert snap["hub_seq"] == served.hub.hub_seq()
    assert len(snap["projections"]["beam"]) == 1


def test_missing_blobs_and_upload(served, tmp_path):
    import hashlib

    a = served.tablet(tmp_path / "a.db")
    auth = enrolment(a.db)
    data = b"notice pdf bytes"
    sha = hashlib.sha256(data).hexdigest()
    ask = json.dumps({"sha256": [sha]}).encode()
    assert json.loads(request(served.url, "POST", "/v1/blobs/missing", ask, auth))["sha256"] == [sha]
    request(served.url, "PUT", f"/v1/blobs/{sha}", data, auth)
    assert json.loads(request(served.url, "POST", "/v1/blobs/missing", ask, auth))["sha256"] == []
    assert request(served.url, "GET", f"/v1/blobs/{sha}", auth=auth) == data


def test_fresh_install_makes_its_own_bundle_key_and_enrolment_gives_the_firms(served, tmp_path, monkeypatch):
    from storage import Store
    from storage.store import DEMO_FIRM_KEY

    monkeypatch.delenv("BRACEWALK_FIRM_KEY")
    a, b = Store(tmp_path / "fa.db"), Store(tmp_path / "fb.db")
    assert a.firm_key != b.firm_key  # no key shared by every install
    assert DEMO_FIRM_KEY.encode() not in (a.firm_key, b.firm_key)
    for store, name in ((a, "A"), (b, "B")):
        from mobile.hub_client import enroll

        enroll(store, served.url, served.hub.new_code(name, "P", "reviewer"))
    assert a.firm_key == b.firm_key == served.hub.bundle_key.encode()  # file bundles work between enrolled devices
