"""Issue 10 item 7: a long import never locks saves out silently."""

import sqlite3

import pytest

import storage.bundle as bundle_mod
import storage.db as db_mod
from mobile.viewmodels.beam import BeamFormViewModel
from storage import Store, StoreBusy
from storage.bundle import export_bundle, import_bundle
from tests.core.beams import glulam


def test_import_commits_in_bounded_batches(tmp_path, monkeypatch):
    src = Store(tmp_path / "src.db")
    site = src.create_site(name="Batches")
    beam = src.save_beam(site.id, glulam())
    for i in range(1000):
        src.update_beam(beam, {"notes": f"edit {i}"})
    export_bundle(src, tmp_path / "b.zip")
    dst = Store(tmp_path / "dst.db")
    commits = []
    real = bundle_mod.transaction

    def counting(db):
        commits.append(1)
        return real(db)

    monkeypatch.setattr(bundle_mod, "transaction", counting)
    monkeypatch.setattr(bundle_mod, "BATCH_OPS", 300)
    assert import_bundle(dst, tmp_path / "b.zip").outcome == "applied"
    assert len(commits) >= 1002 // 300  # never one transaction for the whole bundle
    assert dst.digest() == src.digest()


def test_save_while_sync_holds_the_lock_is_told_not_lost(tmp_path, monkeypatch):
    monkeypatch.setattr(db_mod, "BUSY_TIMEOUT_S", 0.2)
    store = Store(tmp_path / "t.db")
    site = store.create_site(name="Busy")
    beam = store.save_beam(site.id, glulam())
    vm = BeamFormViewModel(store, site.id, beam)
    other = sqlite3.connect(tmp_path / "t.db", isolation_level=None)
    other.execute("BEGIN IMMEDIATE")  # what a sync's batch holds
    with pytest.raises(StoreBusy, match="sync"):
        store.update_beam(beam, {"b_mm": 175})
    assert vm.set_field("b_mm", "175") is False
    assert "NOT SAVED" in vm.errors["b_mm"]
    assert "sync" in vm.errors["b_mm"]
    other.execute("ROLLBACK")
    assert vm.set_field("b_mm", "175") is True
    assert store.beam(beam).b_mm == 175
