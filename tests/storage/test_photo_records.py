"""Imported photo records pass the checks of a local save (``PhotoRecord``), except a caption's length.

Before, an imported photo record was checked for its ids and SHA-256 only: a signed op from an enrolled
device could carry a mark outside the photo (x = 5: an arrow drawn off the picture on the notice), a time
in another format, or keys no app writes. A caption longer than today's 500 characters still travels:
0.6.0 set no limit, and a markup copies its original's caption.
"""

import pytest

from storage import Store
from storage.bundle import export_bundle, import_bundle
from storage.clock import uuid7

SHA = "ab" * 32


def _photo(**over):
    return {"site_id": "", "sha256": SHA, "mime": "image/jpeg", "beam_id": None, "deficiency_id": None,
            "caption": "north bearing", **over}  # fmt: skip


def _travels(tmp_path, payload):
    a = Store(tmp_path / "a.db")
    site = a.create_site(name="Photos")
    a.save("photo", uuid7(), dict(payload, site_id=site.id), kind="insert")  # as an op from another app
    export_bundle(a, tmp_path / "p.bwsync")
    return import_bundle(Store(tmp_path / "b.db"), tmp_path / "p.bwsync")


def test_a_photo_as_the_app_writes_it_imports(tmp_path):
    assert _travels(tmp_path, _photo(taken_at="2026-12-02T10:15:00Z", taken_by="A. Reviewer")).outcome == "applied"


def test_a_caption_from_before_the_limit_still_travels(tmp_path):
    assert _travels(tmp_path, _photo(caption="x" * 900)).outcome == "applied"  # 0.6.0 had no caption limit


@pytest.mark.parametrize(
    ("over", "field"),
    [
        ({"marks": [{"kind": "arrow", "x": 5.0, "y": 0.5, "x2": 0.2, "y2": 0.2}], "marks_of": "p0"}, "marks.0.x"),
        ({"marks": [{"kind": "star", "x": 0.5, "y": 0.5}], "marks_of": "p0"}, "marks.0.kind"),
        ({"taken_at": "yesterday"}, "taken_at"),
        ({"shot_by_drone": True}, "shot_by_drone"),
    ],
)
def test_a_photo_record_no_app_writes_is_refused_whole(tmp_path, over, field):
    report = _travels(tmp_path, _photo(**over))
    assert report.outcome == "refused"
    assert f"field '{field}'" in report.reason
