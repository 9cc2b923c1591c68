"""Photos for the PDF: EXIF orientation applied, downscaled and re-encoded with Pillow."""

from __future__ import annotations

import io

from PIL import Image, ImageOps

MAX_EDGE_PX = 900
JPEG_QUALITY = 72


def prepare_photo(content: bytes, max_edge_px: int = MAX_EDGE_PX) -> tuple[bytes, int, int]:
    """Return (JPEG bytes, width px, height px): upright per EXIF and at most max_edge_px on the long edge."""
    with Image.open(io.BytesIO(content)) as img:
        scale = max_edge_px / max(img.size)
        if scale < 1.0:
            # JPEG only: decode at the smallest DCT scale that still covers the target size (much faster).
            img.draft("RGB", (int(img.width * scale) + 1, int(img.height * scale) + 1))
        upright = ImageOps.exif_transpose(img)
        rgb = upright.convert("RGB")
        rgb.thumbnail((max_edge_px, max_edge_px))
        out = io.BytesIO()
        rgb.save(out, "JPEG", quality=JPEG_QUALITY, optimize=True)
        return out.getvalue(), rgb.width, rgb.height
