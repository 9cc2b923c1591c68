"""A wide photo (a panorama along a beam) on the notice: a row of its own across the page, printed tall enough to read.

It printed in a third of a row, 55 mm wide: a 8:1 panorama was a strip 6.9 mm tall. Source for what a reader
needs: a contractor acts on what the photo shows, so it must be printed large enough to see (common practice for
construction photographs in reports); sizes are reportlab's own (the arguments ``drawImage`` is called with).
"""

import io

from PIL import Image
from pypdf import PdfReader
from reportlab.lib.units import mm

from reports.content import Photo
from reports.photos import WIDE_ASPECT, upright_size, wide_box
from reports.render import WIDTH, _photo_table, _styles, render_notice
from tests.reports.test_notice import _notice, save_pngs
from tests.reports.test_notice25 import _item, _jpeg, _Recording

PANORAMA, LANDSCAPE, PORTRAIT = (4000, 500), (2048, 1536), (1536, 2048)


def _photo(n, size, caption):
    return Photo(sha256=f"p{n}", load=lambda: _jpeg(size, 60 + 20 * n), caption=caption)


def _drawn_mm(flowable):
    """(width, height) in mm at which ``flowable`` draws its photo (reportlab's drawImage arguments)."""
    flowable.wrap(WIDTH, 300 * mm)
    canv = _Recording()
    flowable.canv = canv
    flowable.draw()
    _, _, _, w, h = canv.images[0]
    return w / mm, h / mm


def test_a_panorama_has_a_row_of_its_own_and_prints_over_20_mm_tall():
    st = _styles()
    photos = [
        _photo(0, LANDSCAPE, "bearing"),
        _photo(1, PANORAMA, "purlin run"),
        *(_photo(n, PORTRAIT, "hanger") for n in (2, 3, 4, 5)),
    ]
    table = _photo_table(photos, st, "item D-AB12-001")
    rows = [[c for c in row if c != ""] for row in table._cellvalues]
    numbers = [[c._caption.text.split(":")[0] for c in row] for row in rows]
    assert numbers == [["Photo 1"], ["Photo 2"], ["Photo 3", "Photo 4", "Photo 5"], ["Photo 6"]]  # reading order kept
    w, h = _drawn_mm(rows[1][0])
    assert w > 160  # across the text width (174 mm less the cell's padding)
    assert h > 20, f"the panorama prints {h:.1f} mm tall"  # 8:1 in a 55 mm cell: 6.9 mm
    assert rows[1][0].wrap(WIDTH, 300 * mm)[1] - rows[1][0]._cap_h - 2 < h * mm + 0.01  # no blank band over it
    assert _drawn_mm(rows[0][0]) == _drawn_mm(_photo_table([photos[0]], st, "x")._cellvalues[0][0])  # others as before


def test_only_photos_over_2_2_times_as_wide_as_tall_are_wide_and_exif_turns_count():
    assert wide_box(_jpeg((round(WIDE_ASPECT * 400) + 2, 400)), WIDTH) is not None
    assert wide_box(_jpeg((round(WIDE_ASPECT * 400) - 2, 400)), WIDTH) is None
    assert wide_box(_jpeg(LANDSCAPE), WIDTH) is None
    # a panorama taken with the phone held upright is stored 500 x 4000 with EXIF orientation 6 (a quarter turn)
    out = io.BytesIO()
    exif = Image.Exif()
    exif[0x0112] = 6
    Image.new("RGB", (500, 4000), (90, 90, 90)).save(out, "JPEG", exif=exif)
    assert upright_size(out.getvalue()) == (4000, 500)
    assert wide_box(out.getvalue(), WIDTH) == (WIDTH, WIDTH / 8)  # as tall as the photo drawn across the row


def test_a_notice_with_a_panorama_prints_every_photo():
    photos = [_photo(0, LANDSCAPE, "bearing"), _photo(1, PANORAMA, "purlin run"), _photo(2, PORTRAIT, "hanger")]
    pdf = render_notice(_notice([_item(photos=photos)]))
    text = " ".join(" ".join((p.extract_text() or "").split()) for p in PdfReader(io.BytesIO(pdf)).pages)
    for caption in ("Photo 1: bearing", "Photo 2: purlin run", "Photo 3: hanger"):
        assert caption in text
    save_pngs(pdf, "notice-panorama")
