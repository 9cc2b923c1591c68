"""A beam's photos, one at a time, with tap-to-place marks (arrow or ring) stored beside the original.

Marks are data (fractions of the photo, y from the top) in a new insert-only photo record that names
the same blob (``Store.mark_photo``); the photo's bytes and its original record are never changed, so
the evidence stays as taken. The notice draws the latest marks over the photo.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from mobile.issue import photo_caption_bits
from storage import Store

RING_RADIUS = 0.08  # a placed ring's radius, fraction of the photo's shorter side
MODES = ("ring", "arrow")


@dataclass
class PhotoViewModel:
    """The photo screen of one beam: its photos and those of its deficiencies."""

    store: Store
    site_id: str
    beam_id: str
    index: int = 0
    mode: str = "ring"
    marks: list[dict[str, Any]] = field(default_factory=list)  # the marks being placed (a draft until saved)
    tail: tuple[float, float] | None = None  # an arrow's first tap, waiting for the second
    message: str = ""

    def __post_init__(self) -> None:
        """Open the first photo with its latest saved marks."""
        self.open(0)

    def photos(self) -> list[dict[str, Any]]:
        """The beam's original photo records (markups left out), oldest first."""
        mine = {d.id for d in self.store.deficiencies(self.site_id) if d.beam_id == self.beam_id}
        return [
            p
            for p in self.store.photos(self.site_id)
            if not p.get("marks_of") and (p.get("beam_id") == self.beam_id or p.get("deficiency_id") in mine)
        ]

    def current(self) -> dict[str, Any] | None:
        """The photo shown, or None when the beam has none."""
        photos = self.photos()
        return photos[self.index] if 0 <= self.index < len(photos) else None

    def saved_marks(self, photo_id: str) -> list[dict[str, Any]]:
        """The latest marks saved on a photo ([] when none)."""
        latest = self.store.latest_markups(self.site_id).get(photo_id)
        return [dict(m) for m in latest["marks"]] if latest else []

    def open(self, index: int) -> None:
        """Show photo ``index`` with its latest saved marks as the draft."""
        self.index = index
        photo = self.current()
        self.marks = self.saved_marks(photo["id"]) if photo else []
        self.tail = None

    def turn(self, step: int) -> None:
        """Next / previous photo (an unsaved draft is dropped, said so)."""
        count = len(self.photos())
        if count:
            dropped = self.changed()
            self.open(max(0, min(count - 1, self.index + step)))
            self.message = "Unsaved marks dropped" if dropped else ""

    def image_path(self) -> str:
        """The photo's blob file ('' while its bytes have not arrived)."""
        photo = self.current()
        return "" if photo is None or photo["pending"] else str(self.store.blob_path(photo["sha256"]))

    def caption(self) -> str:
        """'Photo 1 of 2 · RB-4 west bearing · taken 2026-12-02 07:34 UTC · by P. Okonkwo-Lind'."""
        photo = self.current()
        if photo is None:
            return "No photo of this beam yet: add one on the beam screen"
        bits = [b for b in photo_caption_bits(photo) if b]
        return " · ".join([f"Photo {self.index + 1} of {len(self.photos())}", *bits])

    def set_mode(self, mode: str) -> None:
        """Place rings or arrows with the next taps."""
        if mode not in MODES:
            msg = f"mark mode {mode!r}; allowed: {', '.join(MODES)}"
            raise ValueError(msg)
        self.mode, self.tail = mode, None
        self.message = "Tap the spot to ring" if mode == "ring" else "Tap where the arrow starts, then where it points"

    def tap(self, fx: float, fy: float) -> bool:
        """A tap at (fx, fy), fractions of the photo from its top-left; False if outside the photo."""
        if self.current() is None or not (0.0 <= fx <= 1.0 and 0.0 <= fy <= 1.0):
            self.message = "Tap on the photo itself"
            return False
        if self.mode == "ring":
            self.marks.append({"kind": "ring", "x": fx, "y": fy, "x2": RING_RADIUS, "y2": 0.0})
            self.message = f"{len(self.marks)} marks (not saved yet)"
        elif self.tail is None:
            self.tail = (fx, fy)
            self.message = "Now tap where the arrow points"
        else:
            (x, y), self.tail = self.tail, None
            self.marks.append({"kind": "arrow", "x": x, "y": y, "x2": fx, "y2": fy})
            self.message = f"{len(self.marks)} marks (not saved yet)"
        return True

    def undo(self) -> None:
        """Take back the last mark (or a waiting arrow start)."""
        if self.tail is not None:
            self.tail = None
        elif self.marks:
            self.marks.pop()
        self.message = f"{len(self.marks)} marks" + (" (not saved yet)" if self.changed() else "")

    def changed(self) -> bool:
        """The draft differs from the saved marks."""
        photo = self.current()
        return photo is not None and self.marks != self.saved_marks(photo["id"])

    def save(self) -> str | None:
        """Store the marks beside the photo (a new record; the original is untouched); the record id."""
        photo = self.current()
        if photo is None or not self.changed():
            self.message = "Nothing to save"
            return None
        pid = self.store.mark_photo(self.site_id, photo["id"], self.marks)
        self.message = f"{len(self.marks)} marks saved beside the photo (the photo itself is unchanged)"
        return pid
