"""A bundle held for a newer app is applied once the app reads it: the reviewer need not find the file again.

Before, a held bundle's copy sat in ``<blobs>/held`` with a row, and nothing ever applied it: after updating,
the reviewer had to still have the original file and import it again, or its changes never arrived.
"""

import pytest

import storage.bundle as bundle_mod
import storage.held as held_mod
from mobile.cli import main as cli
from mobile.viewmodels.sync import SyncViewModel
from storage import Store
from storage.bundle import export_bundle, import_bundle
from storage.held import apply_held, held_bundles
from tests.core.beams import glulam

NEWER = 99  # a record schema this app does not know yet


@pytest.fixture
def held(tmp_path, monkeypatch):
    """Tablet b holds a bundle from tablet a, whose app writes record schema NEWER; the file is then gone."""
    a, b = Store(tmp_path / "a.db"), Store(tmp_path / "b.db")
    site = a.create_site(name="Newer app")
    a.save_beam(site.id, glulam())
    monkeypatch.setattr(bundle_mod, "SCHEMA_VERSION", NEWER)
    export_bundle(a, tmp_path / "new.bwsync")
    monkeypatch.undo()
    assert import_bundle(b, tmp_path / "new.bwsync").outcome == "held"
    (tmp_path / "new.bwsync").unlink()  # the reviewer no longer has the file
    return a, b


def _update(monkeypatch):
    """Make the app read schema NEWER, as after an update."""
    monkeypatch.setattr(bundle_mod, "SCHEMA_VERSION", NEWER)
    monkeypatch.setattr(held_mod, "SCHEMA_VERSION", NEWER)


def test_nothing_is_applied_before_the_update(held):
    _a, b = held
    (h,) = held_bundles(b)
    assert not h.readable
    assert apply_held(b) == []
    assert b.sites() == []
    assert "held until this app is updated" in SyncViewModel(b).held_bundles_text()
    assert not SyncViewModel(b).has_readable_held()


def test_after_the_update_the_held_copy_is_applied_and_forgotten(held, monkeypatch):
    a, b = held
    (h,) = held_bundles(b)
    _update(monkeypatch)
    vm = SyncViewModel(b)
    assert vm.has_readable_held()
    assert "can be applied now" in vm.held_bundles_text()
    assert vm.apply_held().startswith("Applied 1 bundle: 2 new changes")
    assert b.digest() == a.digest()
    assert held_bundles(b) == []
    assert not h.path.exists()
    assert vm.held_bundles_text() == ""


def test_sync_import_applies_held_bundles_first(held, monkeypatch, tmp_path, capsys):
    a, b = held
    _update(monkeypatch)
    a.save_beam(a.sites()[0].id, glulam(mark="T-2"))
    export_bundle(a, tmp_path / "later.bwsync")
    assert cli(["sync", "import", "--db", str(b.path), str(tmp_path / "later.bwsync")]) == 0
    out = capsys.readouterr().out
    assert "applied now, 2 new ops of 2" in out.splitlines()[0]
    assert b.digest() == a.digest()
