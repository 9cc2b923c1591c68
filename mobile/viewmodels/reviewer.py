"""The signing reviewer of this device, set up once: name, designation, licence, firm, contact, signature.

The signature is drawn on the screen (strokes of points, turned into a black-on-white PNG here) or
imported from an image file; either way it is stored as a PNG blob and printed on every notice.
"""

from __future__ import annotations

import io
from dataclasses import dataclass, field
from pathlib import Path

from PIL import Image, ImageDraw, ImageOps
from pydantic import ValidationError

from core.records import ReviewerProfile
from storage import Store

Stroke = list[tuple[float, float]]  # points in pad coordinates, origin bottom-left (Kivy)
SIGNATURE_PX = (600, 200)
MAX_IMPORT_BYTES = 5_000_000


def signature_png(strokes: list[Stroke], pad_size: tuple[float, float]) -> bytes:
    """A black-on-white PNG of strokes drawn on a pad of pad_size (points scaled to SIGNATURE_PX)."""
    if not any(len(s) >= 2 for s in strokes):
        msg = "signature: draw at least one line on the pad"
        raise ValueError(msg)
    w, h = pad_size
    if w <= 0 or h <= 0:
        msg = f"signature: pad size {pad_size} must be positive"
        raise ValueError(msg)
    img = Image.new("L", SIGNATURE_PX, 255)
    draw = ImageDraw.Draw(img)
    sx, sy = SIGNATURE_PX[0] / w, SIGNATURE_PX[1] / h
    for stroke in strokes:
        pts = [(x * sx, SIGNATURE_PX[1] - y * sy) for x, y in stroke]
        if len(pts) >= 2:
            draw.line(pts, fill=0, width=4, joint="curve")
    out = io.BytesIO()
    img.save(out, "PNG", optimize=True)
    return out.getvalue()


def imported_png(path: Path) -> bytes:
    """An image file as a grey PNG at most SIGNATURE_PX (the signature a reviewer scanned)."""
    if path.stat().st_size > MAX_IMPORT_BYTES:
        msg = f"signature file {path.name}: over {MAX_IMPORT_BYTES} bytes; allowed up to that"
        raise ValueError(msg)
    with Image.open(path) as img:
        grey = ImageOps.exif_transpose(img).convert("L")
        grey.thumbnail(SIGNATURE_PX)
        out = io.BytesIO()
        grey.save(out, "PNG", optimize=True)
        return out.getvalue()


@dataclass
class ReviewerViewModel:
    """The reviewer profile and signature set-up screen."""

    store: Store
    fields: dict[str, str] = field(default_factory=dict)
    seal: bool = False
    page_size: str = "letter"
    signature: bytes | None = None
    message: str = ""

    def __post_init__(self) -> None:
        """Start from the saved profile (or the device user's name)."""
        p = self.store.reviewer_profile()
        if p is None:
            self.fields = dict.fromkeys(("designation", "licence_number", "firm", "phone", "email"), "")
            self.fields["name"] = self.store.device_user()[0]
            return
        self.fields = {k: getattr(p, k) for k in ("name", "designation", "licence_number", "firm", "phone", "email")}
        self.seal, self.page_size = p.seal, p.page_size
        self.signature = self.store.blob(p.signature_sha256) if p.signature_sha256 else None

    def set(self, name: str, value: str) -> None:
        """Change one text field."""
        if name not in self.fields:
            msg = f"reviewer profile field {name!r}; allowed: {sorted(self.fields)}"
            raise KeyError(msg)
        self.fields[name] = value

    def draw_signature(self, strokes: list[Stroke], pad_size: tuple[float, float]) -> None:
        """Take the signature drawn on the pad."""
        self.signature = signature_png(strokes, pad_size)

    def import_signature(self, path: Path) -> None:
        """Take the signature from an image file."""
        self.signature = imported_png(path)

    def save(self) -> ReviewerProfile | None:
        """Store the profile (signature as a blob); None with a message naming what is wrong."""
        sha = self.store.put_blob(self.signature, "image/png") if self.signature else ""
        try:
            profile = ReviewerProfile(
                **{k: v.strip() for k, v in self.fields.items()},
                signature_sha256=sha,
                seal=self.seal,
                page_size=self.page_size,
            )
        except ValidationError as exc:
            err = exc.errors()[0]
            self.message = f"Not saved: {'.'.join(str(x) for x in err['loc'])}: {err['msg']}"
            return None
        self.store.set_reviewer_profile(profile)
        self.message = "Saved: notices issued on this device are signed " + profile.name
        return profile
