"""The deficiency notice PDF parsed back with pypdf, and issuing/verification through storage."""

import hashlib
import io
import shutil
import subprocess
from pathlib import Path

import pytest
from PIL import Image
from pypdf import PdfReader

from core import recheck
from core.records import Deficiency
from mobile.demo.run import demo_clock, load_demo, raise_all
from mobile.issue import acknowledge, issue_notice_for_site, rows_for_items, verify_pdf
from reports.content import Notice, item_for
from reports.photos import prepare_photo
from reports.render import render_notice
from storage import Store
from tests.core.beams import glulam

ARTEFACTS = Path(__file__).resolve().parents[2] / "test-artefacts"


def text_of(pdf):
    return "\n".join(p.extract_text() for p in PdfReader(io.BytesIO(pdf)).pages)


def save_pngs(pdf, name):
    """Render pages to PNG (pdftoppm) as artefacts a person looks at."""
    ARTEFACTS.mkdir(exist_ok=True)
    path = ARTEFACTS / f"{name}.pdf"
    path.write_bytes(pdf)
    if shutil.which("pdftoppm"):
        subprocess.run(["pdftoppm", "-r", "70", "-png", str(path), str(ARTEFACTS / name)], check=True)


def _notice(items, **over):
    data = dict(
        site_name="Cedar Hollow Community Hall",
        address="48 Larchmont Road",
        permit_number="BP-2026-0417",
        project_number="TSR-2611",
        notice_number="TSR-2611-FR-AB12-001",
        revision=0,
        visit_at="2026-11-30 09:15",
        issued_on="2026-11-30",
        reviewer="Priya Okonkwo-Lind",
        firm="Tamarack",
        addressed_to="Northbeam Builders",
        distribution=["Owner", "File"],
        weather="snow",
        scope_reviewed="Roof",
        scope_not_reviewed="Mezzanine",
        items=items,
    )
    data.update(over)
    return Notice(**data)


def _item(text="RB-5 at support 2", n=1, photos=None, beam_id="b1"):
    beam = glulam(
        bearings=[
            {"lateral": True, "rotation": True, "length_mm": 140},
            {"lateral": True, "rotation": False, "length_mm": 140},
        ]
    )
    r = recheck(beam)
    f = r.findings[0]
    d = Deficiency(
        id=f"d{n}",
        site_id="s",
        beam_id=beam_id,
        number=f"D-AB12-{n:03d}",
        code=f.code,
        priority=f.priority.value,
        location=f"Roof, grid E / 3-4, {text}",
        description=f.message,
        reference="S-201; " + f.clause,
        action=f.action,
    )
    return item_for(d, beam, r, "measured 130 x 456 mm", photos), r


def test_header_items_cautions_and_page_numbers():
    item, _ = _item()
    pdf = render_notice(_notice([item]))
    text = text_of(pdf)
    for value in (
        "Cedar Hollow Community Hall",
        "48 Larchmont Road",
        "BP-2026-0417",
        "TSR-2611-FR-AB12-001",
        "2026-11-30 09:15",
        "Priya Okonkwo-Lind",
        "Tamarack",
        "Northbeam Builders",
        "Mezzanine",
        "D-AB12-001",
        "Roof, grid E / 3-4",
        "IMMEDIATE",
    ):
        assert value in text, value
    assert "Make safe now" in text
    for caution in ("engineer of record", "Local codes", "means, methods", "recording and recheck aid"):
        assert caution in text.replace("\n", " ")
    n = len(PdfReader(io.BytesIO(pdf)).pages)
    assert f"page 1 of {n}" in text
    assert f"page {n} of {n}" in text
    save_pngs(pdf, "notice-one-item")


def test_not_established_recheck_numbers_printed():
    item, r = _item()
    text = " ".join(text_of(render_notice(_notice([item]))).split())  # cells wrap at any width
    assert "not established (a bearing restraint missing or not seen)" in text
    assert "not established, taken as failing" in text  # unseen restraint taken as the unfavourable case
    assert f"Mf {r.bending[0].mf_knm:.1f}" in text


def test_kl_cb_mr_values_match_recheck():
    beam = glulam()
    r = recheck(beam)
    d = Deficiency(
        id="d",
        site_id="s",
        number="D-1",
        code="x",
        priority="observation",
        location="L",
        description="d",
        reference="r",
        action="a",
    )
    text = text_of(render_notice(_notice([item_for(d, beam, r, "obs")]))).replace("\n", " ")
    b = r.bending[0]
    # demand with its governing combination, capacity, ratio
    assert f"Mf {b.mf_knm:.1f} kN·m under {b.combination} Mr {b.mr_knm:.1f} kN·m {b.utilisation:.2f}" in text
    s = r.shear
    assert f"Vf {s.vf_kn:.1f} kN under {s.combination} Vr {s.vr_kn:.1f} kN {s.utilisation:.2f}" in text
    d = r.deflection
    # the deflection row names its specified-load case and the ratio of its limit (span / ratio)
    assert f"{d.delta_mm:.1f} mm under specified {d.case} limit {d.limit_mm:.1f} mm (L/{d.limit_ratio:g})" in text


@pytest.mark.parametrize(
    "user_text",
    ["<b>bold</b> & <font size=40>big</font>", "Déjà vu — φ ≤ 2.5 × 3", "Kanji 木材 and Cyrillic брус", "X" * 300],
)
def test_user_text_appears_as_typed(user_text):
    item, _ = _item(text=user_text)
    text = text_of(render_notice(_notice([item])))
    flat = text.replace("\n", "")
    if user_text.startswith("Kanji"):
        assert "Cyrillic брус" in flat  # DejaVu Sans has no CJK glyphs; the rest renders
    else:
        assert user_text in flat


def test_same_content_same_bytes():
    item, _ = _item()
    assert render_notice(_notice([item])) == render_notice(_notice([item]))


def _big_photo():
    img = Image.new("RGB", (4000, 3000), (120, 90, 60))
    out = io.BytesIO()
    exif = Image.Exif()
    exif[0x0112] = 6  # rotate 90 degrees
    img.save(out, "JPEG", quality=95, exif=exif)
    return out.getvalue()


def test_photo_downscaled_and_upright():
    jpeg, w, h = prepare_photo(_big_photo())
    assert (w, h) == (675, 900)  # EXIF orientation 6: portrait after transpose, long edge 900 px
    assert len(jpeg) < 200_000


def test_hundred_items_with_photos_keep_each_item_whole():
    photo = _big_photo()
    items = [_item(text=f"ITEM-{i:03d}-LOC", n=i, photos=[photo], beam_id=f"b{i}")[0] for i in range(100)]
    pdf = render_notice(_notice(items))
    assert len(pdf) < 15_000_000
    reader = PdfReader(io.BytesIO(pdf))
    texts = [page.extract_text() for page in reader.pages]  # once per page: extraction is slow
    first = next(p for p, text in enumerate(texts) if "Items by member" in text)
    for i in range(100):
        pages = [p for p, text in enumerate(texts) if p >= first and f"ITEM-{i:03d}-LOC" in text]
        assert len(pages) == 1, (i, pages)  # an item (with its photo) never splits across pages
    images = sum(len(p.images) for p in reader.pages)
    assert images == 100


def test_issue_store_hash_and_verify(tmp_path):
    store = Store(tmp_path / "d.db", wall_clock_ms=demo_clock())  # on the demo's day, as the demo runs
    site_id = load_demo(store)
    raise_all(store, site_id)
    ack = acknowledge(store, rows_for_items(store, site_id), "P. O.")  # the demo beams rest on memory rows
    notice, path = issue_notice_for_site(
        store, site_id, tmp_path / "n.pdf", issued_by="P. O.", issued_on="2026-11-30", acknowledgement=ack
    )
    pdf = path.read_bytes()
    assert hashlib.sha256(pdf).hexdigest() == notice.pdf_sha256
    assert store.blob(notice.pdf_sha256) == pdf
    assert verify_pdf(store, path).number == notice.number
    changed = bytearray(pdf)
    changed[len(changed) // 2] ^= 0x01
    (tmp_path / "x.pdf").write_bytes(bytes(changed))
    assert verify_pdf(store, tmp_path / "x.pdf") is None
    save_pngs(pdf, "demo-notice")


def test_photos_are_embedded_as_their_jpeg_and_named_by_it():
    """A photo's JPEG goes into the PDF as is (DCTDecode, the PDF 1.4 reference's JPEG filter), named by its bytes."""
    from reports.photos import JpegReader

    a, b = _big_photo(), _big_photo()
    other = io.BytesIO()
    Image.new("RGB", (800, 600), (10, 200, 30)).save(other, "JPEG")
    photos = (a, b, other.getvalue())
    items = [_item(text=f"ITEM-{i}", n=i, photos=[p], beam_id=f"b{i}")[0] for i, p in enumerate(photos)]
    pdf = render_notice(_notice(items))
    assert pdf == render_notice(_notice(items))  # invariant bytes
    xobjects = {}
    for page in PdfReader(io.BytesIO(pdf)).pages:
        for name, ref in (page["/Resources"].get("/XObject") or {}).items():
            obj = ref.get_object()
            if obj.get("/Subtype") == "/Image":
                xobjects[name] = obj
    assert len(xobjects) == 2  # the two equal photos share one image; the third is its own
    assert all(list(o["/Filter"]) == ["/DCTDecode"] for o in xobjects.values())
    jpeg, _, _ = prepare_photo(other.getvalue())
    assert any(o.get_data() == jpeg for o in xobjects.values())  # the prepared JPEG, byte for byte
    png = io.BytesIO()
    Image.new("RGB", (10, 10)).save(png, "PNG")
    with pytest.raises(ValueError, match="JPEG bytes only"):
        JpegReader(png.getvalue())
