"""Issue 10: clocks, restored devices, spoofed origins, bad records, oversized bundles, file faults.

Each test reproduces one failure reported by a tester (it failed before the fix).
"""

import io
import json
import time
import zipfile

import pytest

from storage import Store
from storage.bundle import BundleRefused, export_bundle, import_bundle, verify_bundle
from storage.oplog import all_ops
from tests.core.beams import glulam
from tests.storage.devices import backup as _backup
from tests.storage.devices import restore as _restore
from tests.storage.devices import sync_file as _sync
from tests.storage.signing import signed_bundle

NOW = 1_900_000_000_000
HOUR = 3_600_000


# -- 1. clocks ---------------------------------------------------------------------------------
def test_slow_tablet_keeps_its_own_edit(tmp_path):
    office = Store(tmp_path / "office.db", wall_clock_ms=lambda: NOW)
    tablet = Store(tmp_path / "tablet.db", wall_clock_ms=lambda: NOW - HOUR)
    site = office.create_site(name="Slow clock")
    beam = office.save_beam(site.id, glulam())
    _sync(office, tablet, tmp_path / "1.zip")
    tablet.update_beam(beam, {"spans_mm": [6100]})
    assert tablet.beam(beam).spans_mm == [6100]
    assert tablet.conflicts() == []
    _sync(tablet, office, tmp_path / "2.zip")
    assert office.beam(beam).spans_mm == [6100]


def test_far_future_stamp_is_flagged_and_does_not_freeze_a_field(tmp_path):
    year = 365 * 24 * HOUR
    forger = Store(tmp_path / "forger.db", wall_clock_ms=lambda: NOW + 50 * year)
    tablet = Store(tmp_path / "tablet.db", wall_clock_ms=lambda: NOW)
    site = forger.create_site(name="Future")
    beam = forger.save_beam(site.id, glulam())
    report = _sync(forger, tablet, tmp_path / "1.zip")
    assert "ahead of this tablet's clock" in report.warning
    assert "ahead" in tablet.db.execute("SELECT reason FROM bundle_log ORDER BY id DESC").fetchone()[0]
    tablet.update_beam(beam, {"b_mm": 175})
    assert tablet.beam(beam).b_mm == 175


def _forge(store, path, edit):
    """Rewrite a bundle's ops with ``edit(op_dict)`` and re-sign it with the store's own key (an insider)."""
    import hashlib

    from storage.oplog import canonical

    z = zipfile.ZipFile(path)
    manifest = json.loads(z.read("manifest.json"))
    ops = [json.loads(line) for line in z.read("ops.jsonl").decode().splitlines()]
    for o in ops:
        edit(o)
    body = ("\n".join(canonical(o) for o in ops) + "\n").encode()
    manifest["ops_sha256"] = hashlib.sha256(body).hexdigest()
    return _write(store, path, manifest, body, {n: z.read(n) for n in z.namelist() if n.startswith("blobs/")})


def _write(store, path, manifest, body, blobs):
    """The bundle re-signed by ``store``'s own key: a device that can sign, gone wrong."""
    ops = [json.loads(line) for line in body.decode().splitlines()]
    path.write_bytes(signed_bundle(store, manifest, ops, blobs))
    return path


@pytest.mark.parametrize("hlc", [2**63, 2**64 + 5, -1])
def test_out_of_range_stamp_refused_not_crash(tmp_path, hlc):
    a, b = Store(tmp_path / "a.db"), Store(tmp_path / "b.db")
    a.create_site(name="Stamp")
    export_bundle(a, tmp_path / "a.zip")

    def edit(o):
        o["hlc"] = hlc

    _forge(a, tmp_path / "a.zip", edit)
    report = import_bundle(b, tmp_path / "a.zip")
    assert report.outcome == "refused"
    assert "hlc" in report.reason


# -- 2. a tablet restored from a backup --------------------------------------------------------
@pytest.mark.parametrize("order", ["import_first", "save_first", "save_first_no_mark"])
def test_restored_tablet_loses_nothing(tmp_path, order):
    office, tablet = Store(tmp_path / "office.db"), Store(tmp_path / "tablet.db")
    site = tablet.create_site(name="Restore")
    beam = tablet.save_beam(site.id, glulam())
    _sync(tablet, office, tmp_path / "0.zip", peer="office")
    _backup(tablet, tmp_path / "backup.db")
    tablet.update_beam(beam, {"b_mm": 175})  # work after the backup, sent to the office
    tablet.raise_deficiency(site.id, beam, "x", "immediate", "L", "before restore", "r", "a")
    _sync(tablet, office, tmp_path / "1.zip", peer="office")
    tablet = _restore(tablet, tmp_path / "backup.db", keep_mark=order != "save_first_no_mark")
    if order == "import_first":
        _sync(office, tablet, tmp_path / "2.zip")
        tablet.update_beam(beam, {"d_mm": 532})
    else:
        tablet.update_beam(beam, {"d_mm": 532})
        tablet.raise_deficiency(site.id, beam, "y", "immediate", "L", "after restore", "r", "a")
        if order == "save_first_no_mark":  # the office cannot tell: it refuses whole and says why
            export_bundle(tablet, tmp_path / "2.zip", peer="office")
            report = import_bundle(office, tmp_path / "2.zip")
            assert report.outcome == "refused"
            assert "restored from a backup" in report.reason
        else:
            _sync(tablet, office, tmp_path / "2.zip", peer="office")
        _sync(office, tablet, tmp_path / "3.zip")
    _sync(tablet, office, tmp_path / "4.zip", peer="office")
    _sync(office, tablet, tmp_path / "5.zip")
    for s in (office, tablet):
        assert (s.beam(beam).b_mm, s.beam(beam).d_mm) == (175, 532)
        texts = {d.description for d in s.deficiencies(site.id)}
        assert "before restore" in texts
        if order != "import_first":
            assert "after restore" in texts
    assert office.digest() == tablet.digest()
    assert tablet.pending_sync_count("office") == 0


# -- 3. a bundle claiming a peer's name ----------------------------------------------------------
def test_bundle_claiming_office_origin_is_refused(tmp_path):
    tablet, other = Store(tmp_path / "tablet.db"), Store(tmp_path / "other.db")
    site = tablet.create_site(name="Spoof")
    tablet.save_beam(site.id, glulam())
    export_bundle(other, tmp_path / "o.zip")
    z = zipfile.ZipFile(tmp_path / "o.zip")
    manifest = json.loads(z.read("manifest.json"))
    manifest["origin"] = "office"
    manifest["vector"] = {tablet.device_id: 999_999_999}
    _write(other, tmp_path / "o.zip", manifest, z.read("ops.jsonl"), {})
    report = import_bundle(tablet, tmp_path / "o.zip")
    assert report.outcome == "refused"
    assert "origin" in report.reason
    assert tablet.pending_sync_count("office") == 2


def test_vector_beyond_what_is_held_does_not_hide_work(tmp_path):
    tablet, other = Store(tmp_path / "tablet.db"), Store(tmp_path / "other.db")
    site = tablet.create_site(name="Spoof")
    tablet.save_beam(site.id, glulam())
    export_bundle(other, tmp_path / "o.zip")
    z = zipfile.ZipFile(tmp_path / "o.zip")
    manifest = json.loads(z.read("manifest.json"))
    manifest["vector"] = {tablet.device_id: 999_999_999}
    _write(other, tmp_path / "o.zip", manifest, z.read("ops.jsonl"), {})
    assert import_bundle(tablet, tmp_path / "o.zip").outcome == "applied"
    export_bundle(tablet, tmp_path / "t.zip", peer=other.device_id)
    assert json.loads(zipfile.ZipFile(tmp_path / "t.zip").read("manifest.json"))["op_count"] == 0
    # the forged vector is held at what exists: 2 ops, never 999,999,999; the count stays sane
    assert tablet.db.execute("SELECT seq FROM peer_cursor WHERE peer=?", [other.device_id]).fetchone()[0] == 2


# -- 4. imported records pass the models --------------------------------------------------------
BAD_RECORDS = [
    ("priority", lambda o: o["payload"].update(priority="whenever") if o["entity"] == "deficiency" else None),
    ("name", lambda o: o["payload"].update(name="") if o["entity"] == "site" else None),
    ("cycle", lambda o: o["payload"].pop("cycle") if o["kind"] == "status" else None),
    ("b_mm", lambda o: o["base"].update(b_mm="nonsense") if o["entity"] == "beam" else None),
    ("b_mm", lambda o: o["payload"].update(b_mm=-5) if o["entity"] == "beam" else None),
    ("pdf_sha256", lambda o: o["payload"].update(pdf_sha256="x") if o["entity"] == "issued_notice" else None),
]


@pytest.mark.parametrize(("field", "edit"), BAD_RECORDS, ids=["priority", "name", "cycle", "base", "b_mm", "pdf"])
def test_bad_record_refused_whole_naming_the_field(tmp_path, field, edit):
    a, b = Store(tmp_path / "a.db"), Store(tmp_path / "b.db")
    site = a.create_site(name="Records")
    beam = a.save_beam(site.id, glulam())
    a.update_beam(beam, {"b_mm": 175})
    d = a.raise_deficiency(site.id, beam, "x", "immediate", "L", "d", "r", "a")
    a.move_status(d.id, "corrected", "c", "contractor")
    a.issue_notice(site.id, "P-FR-1", b"%PDF-1.4 test", [d.id], "R", time.strftime("%Y-%m-%d"))
    export_bundle(a, tmp_path / "a.zip")
    _forge(a, tmp_path / "a.zip", edit)
    before = b.projections()
    report = import_bundle(b, tmp_path / "a.zip")
    assert report.outcome == "refused", report
    assert "invalid record" in report.reason
    assert repr(field) in report.reason
    assert b.projections() == before
    assert b.db.execute("SELECT count(*) FROM blob").fetchone()[0] == 0


# -- 5. limits ----------------------------------------------------------------------------------
def test_huge_manifest_refused_before_the_mac_is_read(tmp_path):
    b = Store(tmp_path / "b.db")
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", compression=zipfile.ZIP_DEFLATED) as z:
        z.writestr("manifest.json", b" " * (64 * 1024 * 1024))
        z.writestr("manifest.sig", "0" * 64)
        z.writestr("ops.jsonl", b"")
        z.writestr("ops.sig", b"")
    assert len(buf.getvalue()) < 200_000
    with pytest.raises(BundleRefused, match="limit"):
        verify_bundle(b, buf.getvalue())


def test_total_unpacked_size_and_entry_count_capped(tmp_path, monkeypatch):
    import storage.bundle as bundle_mod

    a, b = Store(tmp_path / "a.db"), Store(tmp_path / "b.db")
    site = a.create_site(name="Bomb")
    for n in range(3):
        a.add_photo(site.id, bytes([n]) * 200_000)
    export_bundle(a, tmp_path / "a.zip")
    raw = (tmp_path / "a.zip").read_bytes()
    monkeypatch.setattr(bundle_mod, "MAX_UNPACKED_BYTES", 500_000)
    with pytest.raises(BundleRefused, match="unpacks to"):
        verify_bundle(b, raw)
    monkeypatch.setattr(bundle_mod, "MAX_UNPACKED_BYTES", 10**9)
    monkeypatch.setattr(bundle_mod, "MAX_ENTRIES", 2)
    with pytest.raises(BundleRefused, match="entries"):
        verify_bundle(b, raw)


def test_entry_larger_than_declared_refused(tmp_path):
    a, b = Store(tmp_path / "a.db"), Store(tmp_path / "b.db")
    site = a.create_site(name="Liar")
    a.add_photo(site.id, b"x" * 5000)
    export_bundle(a, tmp_path / "a.zip")
    z = zipfile.ZipFile(tmp_path / "a.zip")
    manifest = json.loads(z.read("manifest.json"))
    sha = manifest["blobs"][0]["sha256"]
    manifest["blobs"][0]["size"] = 10
    _write(a, tmp_path / "a.zip", manifest, z.read("ops.jsonl"), {f"blobs/{sha}": z.read(f"blobs/{sha}")})
    with pytest.raises(BundleRefused, match="limit 10"):
        verify_bundle(b, (tmp_path / "a.zip").read_bytes())


# -- 6. verifying a notice against the log --------------------------------------------------------
def test_verify_uses_the_log_not_the_edited_table(tmp_path):
    import hashlib

    from storage.oplog import IntegrityError

    s = Store(tmp_path / "s.db")
    site = s.create_site(name="Verify")
    original, altered = b"%PDF-1.4 original notice", b"%PDF-1.4 altered notice"
    notice = s.issue_notice(site.id, "P-FR-1", original, [], "R", "2026-01-01")
    assert s.find_issued_by_hash(hashlib.sha256(original).hexdigest()).number == "P-FR-1"
    fake = hashlib.sha256(altered).hexdigest()
    s.db.execute("UPDATE issued_notice SET data = json_set(data, '$.pdf_sha256', ?) WHERE id = ?", [fake, notice.id])
    assert s.find_issued_by_hash(fake) is None  # the altered PDF is not an issued notice
    with pytest.raises(IntegrityError, match="differs from its logged record"):
        s.find_issued_by_hash(hashlib.sha256(original).hexdigest())


def test_full_export_of_a_restored_device_with_a_hole_is_accepted(tmp_path):
    office, tablet = Store(tmp_path / "office.db"), Store(tmp_path / "tablet.db")
    site = tablet.create_site(name="Hole")
    beam = tablet.save_beam(site.id, glulam())
    _sync(tablet, office, tmp_path / "0.zip", peer="office")
    _backup(tablet, tmp_path / "backup.db")
    tablet.update_beam(beam, {"b_mm": 175})
    _sync(tablet, office, tmp_path / "1.zip", peer="office")
    tablet = _restore(tablet, tmp_path / "backup.db")  # the mark moves its counter past seq 3
    tablet.update_beam(beam, {"d_mm": 532})  # seq 4: the tablet holds 1, 2 and 4
    fresh = Store(tmp_path / "fresh.db")
    _sync(tablet, fresh, tmp_path / "2.zip")  # a full export sends 1-2 now, not a bundle with a hole
    _sync(office, tablet, tmp_path / "3.zip")  # seq 3 comes back
    _sync(tablet, fresh, tmp_path / "4.zip")
    _sync(tablet, office, tmp_path / "5.zip", peer="office")
    assert fresh.beam(beam).d_mm == 532
    assert fresh.beam(beam).b_mm == 175
    assert office.digest() == tablet.digest() == fresh.digest()


def test_bundle_larger_than_the_free_space_refused_before_writing(tmp_path, monkeypatch):
    import storage.bundle as bundle_mod

    a, b = Store(tmp_path / "a.db"), Store(tmp_path / "b.db")
    site = a.create_site(name="Space")
    a.add_photo(site.id, b"p" * 100_000)
    export_bundle(a, tmp_path / "a.zip")
    monkeypatch.setattr(bundle_mod, "MIN_FREE_BYTES", 10**15)  # as if the disk were nearly full
    report = import_bundle(b, tmp_path / "a.zip")
    assert report.outcome == "refused"
    assert "free space" in report.reason
    assert not [p for p in b.blob_dir.rglob("*") if p.is_file()]
    assert b.projections() == Store(":memory:").projections()


def test_stamp_near_the_end_of_the_range_cannot_stop_local_saves(tmp_path):
    from storage.clock import HLC_MAX

    a, b = Store(tmp_path / "a.db"), Store(tmp_path / "b.db")
    site = a.create_site(name="End of time")
    export_bundle(a, tmp_path / "a.zip")

    def edit(o):
        o["hlc"] = HLC_MAX

    _forge(a, tmp_path / "a.zip", edit)
    report = import_bundle(b, tmp_path / "a.zip")
    assert report.outcome == "refused"
    assert "years ahead" in report.reason
    b.create_site(name="Still saving")
    del site


# -- 7. a bundle file that never arrived ---------------------------------------------------------
def test_a_lost_bundle_file_is_sent_again_and_the_screen_says_so(tmp_path):
    """A file lost on the way (a USB stick left on site) leaves its changes to go in the next file.

    sync.md 3.7: exporting never advances cursors; they move on acknowledgement only.
    """
    from mobile.viewmodels.sync import SyncViewModel

    tablet, office = Store(tmp_path / "tablet.db"), Store(tmp_path / "office.db")
    vm = SyncViewModel(tablet)  # the Sync screen's peer, "office"
    site = tablet.create_site(name="Lost file")
    beam = tablet.save_beam(site.id, glulam())
    assert vm.status().startswith("2 changes not yet sent to the office")
    vm.export(tmp_path / "stick1")
    assert vm.status().startswith("2 changes written to a file, not yet confirmed received")
    for f in (tmp_path / "stick1").iterdir():
        f.unlink()  # the stick is lost
    tablet.update_beam(beam, {"b_mm": 175})
    vm.export(tmp_path / "stick2")
    (sent,) = sorted((tmp_path / "stick2").iterdir())
    report = import_bundle(office, sent)
    assert (report.outcome, report.ops_new) == ("applied", 3)  # the lost file's changes came again
    export_bundle(office, tmp_path / "back.zip", peer=tablet.device_id)
    assert import_bundle(tablet, tmp_path / "back.zip").outcome == "applied"  # the office holds them: acknowledged
    assert office.digest() == tablet.digest()
    assert vm.status().startswith("Everything sent and confirmed received")
    assert tablet.pending_sync_count() == 0


def test_cursors_an_old_export_moved_are_not_taken_as_acknowledged(tmp_path):
    """A database from before migration 7 whose export had moved the office cursor resends those changes."""
    import sqlite3

    tablet = Store(tmp_path / "tablet.db")
    tablet.create_site(name="Old cursor")
    me = tablet.device_id
    tablet.close()
    con = sqlite3.connect(tmp_path / "tablet.db")
    con.execute("DROP TABLE peer_written")
    con.execute("INSERT INTO peer_cursor VALUES ('office', ?, 1)", [me])  # as an old export left it
    con.execute("INSERT INTO peer_cursor VALUES ('hub', ?, 1)", [me])  # the hub's answer: an acknowledgement
    con.execute("PRAGMA user_version = 6")
    con.commit()
    con.close()
    tablet = Store(tmp_path / "tablet.db")
    assert tablet.db.execute("SELECT seq FROM peer_written WHERE peer='office'").fetchone()[0] == 1
    assert tablet.db.execute("SELECT peer FROM peer_cursor").fetchall() == [("hub",)]
    assert tablet.pending_sync_count() == 0  # the hub acknowledged it


# -- 6. a restored tablet without its sent mark, both sides sending only what the other lacks ----------
def test_restored_tablet_without_its_mark_converges_with_peer_cursors(tmp_path):
    """A restore that reused seq numbers comes to light (sync.md 3.2, invariant I9).

    It must not leave two devices each believing the other holds its op 3 while they hold different ones
    (every import 'applied, 0 new', the two never agreeing).
    """
    office, tablet = Store(tmp_path / "office.db"), Store(tmp_path / "tablet.db")
    site = tablet.create_site(name="Two devices")
    beam = tablet.save_beam(site.id, glulam())
    _sync(tablet, office, tmp_path / "0.zip", peer=office.device_id)
    _backup(tablet, tmp_path / "backup.db")
    tablet.update_beam(beam, {"b_mm": 175})  # lost by the restore; the office has it
    _sync(tablet, office, tmp_path / "1.zip", peer=office.device_id)
    _sync(office, tablet, tmp_path / "ack.zip", peer=tablet.device_id)  # the office acknowledges it
    tablet = _restore(tablet, tmp_path / "backup.db", keep_mark=False)
    tablet.update_beam(beam, {"d_mm": 532})  # the same seq as the lost save, other content
    outcomes = []
    for n in range(3):
        for src, dst in ((office, tablet), (tablet, office)):
            path = tmp_path / f"x{n}{src is office}.zip"
            export_bundle(src, path, peer=dst.device_id)
            report = import_bundle(dst, path)
            outcomes.append((report.outcome, report.reason[:60]))
    assert (tablet.beam(beam).b_mm, tablet.beam(beam).d_mm) == (175, 532), outcomes
    assert (office.beam(beam).b_mm, office.beam(beam).d_mm) == (175, 532), outcomes
    assert office.digest() == tablet.digest()
    # what it took, in words: the tablet's send was refused once, saying why, then it renumbered and sent again
    assert outcomes[-2:] == [("applied", ""), ("applied", "")], outcomes


# -- 9. a colleague's fast clock does not spread ----------------------------------------------------
def test_a_fast_colleagues_stamps_do_not_carry_this_tablets_clock_ahead(tmp_path):
    """sync.md 3.3: accept far-ahead ops, but do not move the local clock past now + max drift because of them.

    Before, the correct tablet's own later saves were stamped a day ahead too, and the hub held its work back
    as 'clock ahead' (more than MAX_DRIFT_MS past the hub's clock) until real time caught up.
    """
    from storage.clock import MAX_DRIFT_MS

    day = 24 * HOUR
    fast = Store(tmp_path / "fast.db", wall_clock_ms=lambda: NOW + day)
    good = Store(tmp_path / "good.db", wall_clock_ms=lambda: NOW)
    site = fast.create_site(name="Fast clock")  # stamped a day ahead
    beam = fast.save_beam(site.id, glulam())
    report = _sync(fast, good, tmp_path / "f.zip")
    assert "ahead of this tablet's clock" in report.warning  # accepted and flagged
    own = good.save_beam(site.id, glulam(mark="G-1"))  # other work: stamped by the good tablet's own clock
    (op,) = [o for o in all_ops(good.db) if o.record_id == own]
    assert (op.hlc >> 16) <= NOW + MAX_DRIFT_MS
    good.update_beam(beam, {"b_mm": 175})  # an edit of the fast tablet's record still takes effect
    assert good.beam(beam).b_mm == 175
    later = good.save_beam(site.id, glulam(mark="G-2"))  # and the clock did not follow that edit either
    (op,) = [o for o in all_ops(good.db) if o.record_id == later]
    assert (op.hlc >> 16) <= NOW + MAX_DRIFT_MS
    _sync(good, fast, tmp_path / "g.zip")
    assert fast.beam(beam).b_mm == 175  # the edit wins on the fast tablet too
    assert fast.digest() == good.digest()
