"""The built-in demo site lives under its own origin: never in a bundle unless asked, never unsynced work."""

import json
import zipfile

from mobile.demo.run import load_demo
from storage import Store
from storage.bundle import export_bundle, import_bundle
from storage.identity import DEMO_ORIGIN
from storage.store import DEMO_FIRM_KEY
from tests.core.beams import glulam


def _bundle_ops(path):
    z = zipfile.ZipFile(path)
    return [json.loads(line) for line in z.read("ops.jsonl").decode().splitlines()], json.loads(z.read("manifest.json"))


def test_first_real_bundle_after_the_demo_carries_no_demo_record(tmp_path):
    tablet = Store(tmp_path / "t.db")
    demo_site = load_demo(tablet)  # what the app does on first run
    assert tablet.pending_sync_count("office") == 0  # the demo is not work waiting to be sent
    real = tablet.create_site(name="Real job")
    tablet.save_beam(real.id, glulam())
    demo_beam = tablet.beams(demo_site)[0][0]
    tablet.update_beam(demo_beam, {"notes": "tried the form on the demo"})  # an edit of the demo stays demo
    assert tablet.pending_sync_count("office") == 2
    export_bundle(tablet, tmp_path / "first.zip", peer="office")
    ops, manifest = _bundle_ops(tmp_path / "first.zip")
    assert {o["origin"] for o in ops} == {tablet.device_id}
    assert {o["record_id"] for o in ops if o["entity"] == "site"} == {real.id}
    assert all(o["payload"].get("site_id") in (None, real.id) for o in ops)
    assert DEMO_ORIGIN not in manifest["vector"]
    assert manifest["blobs"] == []  # the demo's photos stay too
    office = Store(tmp_path / "office.db")
    assert import_bundle(office, tmp_path / "first.zip").outcome == "applied"
    assert [s.name for s in office.sites()] == ["Real job"]
    # the tablet without its demo holds what the office holds (the tablet is ahead by the demo edit only)
    assert tablet.digest(include_demo=False) == office.digest()
    assert tablet.digest() != office.digest()


def test_the_demo_goes_only_when_asked_and_only_to_a_demo_database(tmp_path):
    tablet = Store(tmp_path / "t.db")
    load_demo(tablet)
    export_bundle(tablet, tmp_path / "demo.zip", include_demo=True)
    ops, _ = _bundle_ops(tmp_path / "demo.zip")
    assert {o["origin"] for o in ops} == {DEMO_ORIGIN}
    real = Store(tmp_path / "real.db")
    report = import_bundle(real, tmp_path / "demo.zip")
    assert report.outcome == "refused"  # signed with the marked demo key, which a real database never trusts
    assert real.sites() == []
    demo_db = Store(tmp_path / "demo.db", firm_key=DEMO_FIRM_KEY)
    report = import_bundle(demo_db, tmp_path / "demo.zip")
    assert report.outcome == "applied", report.reason
    assert demo_db.digest() == tablet.digest()


def test_sync_export_leaves_the_demo_out_unless_the_flag_asks(tmp_path, capsys):
    from mobile.cli import main

    tablet = Store(tmp_path / "t.db")
    load_demo(tablet)
    tablet.close()
    assert main(["sync", "export", "--db", str(tmp_path / "t.db"), "--out", str(tmp_path / "a.zip")]) == 0
    assert _bundle_ops(tmp_path / "a.zip")[0] == []
    args = ["sync", "export", "--db", str(tmp_path / "t.db"), "--out", str(tmp_path / "b.zip"), "--include-demo"]
    assert main(args) == 0
    assert {o["origin"] for o in _bundle_ops(tmp_path / "b.zip")[0]} == {DEMO_ORIGIN}
    capsys.readouterr()
