"""ImportReport counts what an import added: a second import of the same bundle adds no files."""

from storage import Store
from storage.bundle import export_bundle, import_bundle


def test_blobs_new_counts_only_files_not_already_held(tmp_path):
    a, b = Store(tmp_path / "a.db"), Store(tmp_path / "b.db")
    site = a.create_site(name="Two photos")
    a.add_photo(site.id, b"first photo bytes" * 100)
    a.add_photo(site.id, b"second photo bytes" * 100)
    export_bundle(a, tmp_path / "a.zip")

    first = import_bundle(b, tmp_path / "a.zip")
    assert (first.outcome, first.blobs_new) == ("applied", 2)
    again = import_bundle(b, tmp_path / "a.zip")
    assert (again.blobs_new, again.ops_new) == (0, 0)

    a.add_photo(site.id, b"third photo bytes" * 100)
    export_bundle(a, tmp_path / "a2.zip")
    third = import_bundle(b, tmp_path / "a2.zip")
    assert third.blobs_new == 1
