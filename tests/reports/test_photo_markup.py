"""Issue 13 item 3: photos record when and by whom they were taken; marks placed in the app are drawn.

Marks are stored as data beside the untouched original and drawn on the notice.

Outside checks: the blob's SHA-256 (hashlib) before and after marking; the notice page rendered by
pypdfium2 and its pixels counted with Pillow (a mid-grey photo gains black and white mark pixels only
where the marks are drawn).
"""

import hashlib
import io
import re

import pypdfium2
from PIL import Image
from pypdf import PdfReader

from core import recheck
from mobile.issue import build_notice
from mobile.viewmodels.photo import PhotoViewModel
from reports.render import render_notice
from storage import Store
from tests.core.beams import glulam

FREE = {"lateral": True, "rotation": False, "length_mm": 140}
HELD = {"lateral": True, "rotation": True, "length_mm": 140}


def _grey_photo() -> bytes:
    out = io.BytesIO()
    Image.new("RGB", (800, 600), (128, 128, 128)).save(out, "PNG")
    return out.getvalue()


def _site(tmp_path):
    store = Store(tmp_path / "p.db")
    store.set_device_user("R. Ames", "reviewer")
    site = store.create_site(name="Aspen Row", project_number="P4")
    beam = glulam(mark="RB-3", bearings=[HELD, FREE])
    bid = store.save_beam(site.id, beam, {"level": "Roof", "gridline": "A / 1-2"})
    (f,) = [f for f in recheck(beam).findings if f.code == "bearing_restraint_missing"]
    store.raise_deficiency(site.id, bid, f.code, f.priority.value, "Roof, grid A", f.message, f.clause, f.action)
    return store, site.id, bid


def _dark_pixels(pdf: bytes) -> int:
    doc = pypdfium2.PdfDocument(io.BytesIO(pdf))
    try:
        count = 0
        for i in range(len(doc)):
            img = doc[i].render(scale=1.5).to_pil().convert("L")
            count += sum(img.histogram()[:40])  # pixels darker than 40 of 255
        return count
    finally:
        doc.close()


def test_photo_records_who_and_when(tmp_path):
    store, site_id, bid = _site(tmp_path)
    pid = store.add_photo(site_id, _grey_photo(), "image/png", beam_id=bid, caption="RB-3 east bearing")
    photo = next(p for p in store.photos(site_id) if p["id"] == pid)
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", photo["taken_at"])  # UTC ISO 8601 with Z
    assert photo["taken_by"] == "R. Ames"  # the device's user
    caption = PhotoViewModel(store, site_id, bid).caption()
    assert caption.startswith("Photo 1 of 1 · RB-3 east bearing · taken ")
    assert caption.endswith(" · by R. Ames")


def test_marks_placed_by_tap_are_saved_beside_the_untouched_original_and_drawn(tmp_path):
    store, site_id, bid = _site(tmp_path)
    content = _grey_photo()
    sha = hashlib.sha256(content).hexdigest()
    pid = store.add_photo(site_id, content, "image/png", beam_id=bid, caption="RB-3 east bearing")
    notice_before, _ = build_notice(store, site_id, "N-1")
    plain = render_notice(notice_before)
    vm = PhotoViewModel(store, site_id, bid)
    assert vm.tap(0.5, 0.5)  # ring
    vm.set_mode("arrow")
    assert vm.tap(0.1, 0.9)  # tail
    assert vm.tap(0.45, 0.55)  # head
    assert not vm.tap(1.2, 0.5)  # outside the photo: nothing placed
    vm.undo()
    vm.set_mode("arrow")
    assert vm.tap(0.1, 0.9)
    assert vm.tap(0.45, 0.55)
    assert [m["kind"] for m in vm.marks] == ["ring", "arrow"]
    assert vm.save() is not None
    assert vm.save() is None  # nothing new to save
    assert hashlib.sha256(store.blob(sha)).hexdigest() == sha  # the evidence photo is never altered
    original = next(p for p in store.photos(site_id) if p["id"] == pid)
    assert "marks" not in original
    markup = next(p for p in store.photos(site_id) if p.get("marks_of") == pid)
    assert markup["sha256"] == sha  # the same blob
    assert markup["taken_by"] == "R. Ames"  # the caption travels with the marks
    assert PhotoViewModel(store, site_id, bid).marks == vm.marks  # reopened: the saved marks
    notice, _ = build_notice(store, site_id, "N-1")
    (photo,) = [p for i in notice.items for p in i.member_photos]
    assert [m.kind for m in photo.marks] == ["ring", "arrow"]
    marked = render_notice(notice)
    # the grey photo has no near-black pixels; the black strokes of the ring and arrow add some
    assert _dark_pixels(marked) > _dark_pixels(plain) + 50
    text = " ".join(" ".join(p.extract_text().split()) for p in PdfReader(io.BytesIO(marked)).pages)
    assert "RB-3 east bearing · taken " in text
    assert "by R. Ames" in text
