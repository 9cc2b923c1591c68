"""Photos for the PDF: EXIF orientation applied, downscaled and re-encoded with Pillow."""

from __future__ import annotations

import hashlib
import io
import math
from collections.abc import Callable
from typing import Any

from PIL import Image, ImageOps
from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.lib.utils import ImageReader
from reportlab.platypus import Flowable

from reports.textrun import Paragraph

MAX_EDGE_PX = 900
JPEG_QUALITY = 72
CELL_W_MM, CELL_H_MM = 55, 41  # a photo's box, three to a row
WIDE_H_MM = 60  # the box of a wide photo, which has a row of its own (its width is the row's)
# width / height from which a photo has a row of its own: in a 55 x 41 mm cell it would print under 25 mm tall
# (a panorama of a run of purlins, 8:1, printed 7 mm tall); across the page it prints 21-60 mm tall
WIDE_ASPECT = 2.2
_QUARTER_TURNS = {5, 6, 7, 8}  # EXIF orientations that turn the picture a quarter: its width is the stored height


def upright_size(content: bytes) -> tuple[int, int]:
    """(width px, height px) of a photo as it is shown (EXIF orientation applied); reads its header only."""
    with Image.open(io.BytesIO(content)) as img:
        w, h = img.size
        return (h, w) if img.getexif().get(0x0112, 1) in _QUARTER_TURNS else (w, h)


def wide_box(photo: Any, row_w: float) -> tuple[float, float] | None:
    """The box (width, height in pt) of a wide ``photo`` on a row of its own ``row_w`` wide; None when not wide.

    Wide: at least ``WIDE_ASPECT`` times as wide as tall, as shown. The box is as tall as the photo drawn
    across the row (at most ``WIDE_H_MM``), so no blank band is left over it. ``photo``: bytes or a
    ``reports.content.Photo``, whose bytes are read once more for their header (and dropped at once).
    """
    w, h = upright_size(photo if isinstance(photo, bytes) else photo.load())
    if w < WIDE_ASPECT * h:
        return None
    return row_w, min(WIDE_H_MM * mm, row_w * h / w)


def prepare_photo(content: bytes, max_edge_px: int = MAX_EDGE_PX) -> tuple[bytes, int, int]:
    """Return (JPEG bytes, width px, height px): upright per EXIF and at most max_edge_px on the long edge."""
    with Image.open(io.BytesIO(content)) as img:
        scale = max_edge_px / max(img.size)
        if scale < 1.0:
            # JPEG only: decode at the smallest DCT scale that still covers the target size (much faster).
            img.draft("RGB", (int(img.width * scale) + 1, int(img.height * scale) + 1))
        upright = ImageOps.exif_transpose(img)  # a copy (turned or not): ``thumbnail`` below may change it
        rgb = upright if upright.mode == "RGB" else upright.convert("RGB")  # convert() would copy it once more
        rgb.thumbnail((max_edge_px, max_edge_px))
        out = io.BytesIO()
        rgb.save(out, "JPEG", quality=JPEG_QUALITY, optimize=True)
        return out.getvalue(), rgb.width, rgb.height


class JpegReader(ImageReader):
    """A reader of a JPEG the notice made itself (``prepare_photo``), named in the PDF by its SHA-256.

    reportlab embeds a JPEG as it is (DCT pass-through) but names an ``ImageReader``'s image by a digest
    of its decoded RGB data, decoding the photo a second time only for that name (about a third of a
    photo's drawing time). Here the name comes from the JPEG bytes themselves, which are what the PDF
    embeds, so equal photos still share one image and different ones never do.
    """

    def __init__(self, jpeg: bytes):
        super().__init__(io.BytesIO(jpeg))
        if self.jpeg_fh() is None:
            msg = "JpegReader takes JPEG bytes only (reportlab would embed its name as pixels otherwise)"
            raise ValueError(msg)
        self._dataA = None  # no soft mask: a JPEG has no alpha
        self._name_bytes = hashlib.sha256(jpeg).digest()

    def getRGBData(self) -> bytes:
        """What reportlab's drawImage hashes to name the image: the JPEG's own digest (see the class)."""
        return self._name_bytes


class PhotoFlowable(Flowable):
    """A photo in a fixed box with its caption: read, downscaled and drawn only when its page is drawn.

    Nothing of the photo is held before or after: the bytes are loaded in ``draw``, the downscaled JPEG
    is embedded as is (DCT pass-through), and the decoded pixels reportlab computes to name the image are
    dropped with the reader when ``draw`` returns, so a notice's memory does not grow with its photos.
    The reviewer's marks (arrows, rings) are drawn over the photo as vectors; the photo is not altered.
    """

    def __init__(
        self, load: Callable[[], bytes], caption: str, marks: tuple[Any, ...], style: Any, box_w: float, box_h: float
    ):
        super().__init__()
        self._load = load
        self._marks = marks
        self._caption = Paragraph(caption, style)
        self._box_w, self._box_h = box_w, box_h
        self._cap_h = 0.0

    def wrap(self, avail_w: float, avail_h: float) -> tuple[float, float]:  # noqa: ARG002 (Flowable.wrap)
        """A fixed box plus the caption's height."""
        self._cap_h = self._caption.wrap(self._box_w, avail_h)[1]
        return self._box_w, self._box_h + 2 + self._cap_h

    def draw(self) -> None:
        """Load, downscale, draw, mark; then let everything go."""
        jpeg, w, h = prepare_photo(self._load())
        scale = min(self._box_w / w, self._box_h / h)
        dw, dh = w * scale, h * scale
        # the photo's lower edge sits on its caption (a wide photo's spare height is left above it)
        x0, y0 = 0.0, self._cap_h + 2
        reader = JpegReader(jpeg)
        self.canv.drawImage(reader, x0, y0, dw, dh)
        reader._image = None  # the reader is kept by nothing after this, but drop the open image at once
        del reader, jpeg
        for m in self._marks:
            _draw_mark(self.canv, m, x0, y0, dw, dh)
        self._caption.drawOn(self.canv, 0, 0)


def _draw_mark(c: Any, m: Any, x0: float, y0: float, w: float, h: float) -> None:
    """An arrow or a ring, black with a white halo so it reads on any photo and in black and white."""
    x, y = x0 + m.x * w, y0 + (1 - m.y) * h
    for colour, width in ((colors.white, 3.2), (colors.black, 1.4)):
        c.setStrokeColor(colour)
        c.setFillColor(colour)
        c.setLineWidth(width)
        if m.kind == "ring":
            c.circle(x, y, max(3.0, m.x2 * min(w, h)), stroke=1, fill=0)
        else:
            hx, hy = x0 + m.x2 * w, y0 + (1 - m.y2) * h
            c.line(x, y, hx, hy)
            ang = math.atan2(hy - y, hx - x)
            for da in (2.6, -2.6):
                c.line(hx, hy, hx + 6 * math.cos(ang + da), hy + 6 * math.sin(ang + da))
    c.setStrokeColor(colors.black)
    c.setFillColor(colors.black)


def photo_flowable(
    photo: Any, number: int, style: Any, box_w: float = CELL_W_MM * mm, box_h: float = CELL_H_MM * mm
) -> PhotoFlowable:
    """A photo (raw bytes or a ``reports.content.Photo``) with its caption ("Photo n: ...")."""
    from reports.render import esc

    if isinstance(photo, bytes):
        data = photo
        return PhotoFlowable(lambda: data, f"Photo {number}", (), style, box_w, box_h)
    caption = f"Photo {number}" + (f": {esc(photo.caption)}" if photo.caption else "")
    return PhotoFlowable(photo.load, caption, tuple(photo.marks), style, box_w, box_h)
