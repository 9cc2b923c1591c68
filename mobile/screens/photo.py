"""The photo screen (photo.kv): a beam's photos one at a time; tap to place a ring or an arrow."""

from __future__ import annotations

import math
from typing import Any

from kivy.app import App
from kivy.graphics import Color, Line
from kivy.properties import StringProperty
from kivy.uix.image import Image
from kivy.uix.screenmanager import Screen

from mobile.viewmodels.photo import PhotoViewModel


class MarkablePhoto(Image):
    """The photo, with the marks drawn over it; a tap is handed on as fractions of the photo."""

    def shown_rect(self) -> tuple[float, float, float, float]:
        """(x, y, width, height) of the photo as drawn inside the widget (contain: centred)."""
        w, h = self.norm_image_size
        return self.center_x - w / 2, self.center_y - h / 2, w, h

    def on_touch_down(self, touch: Any) -> bool:
        """A tap on the photo: (fx, fy) from its top-left, to the screen."""
        if not self.collide_point(*touch.pos) or not self.source:
            return False
        x0, y0, w, h = self.shown_rect()
        if w <= 0 or h <= 0:
            return False
        screen = self.parent
        while screen is not None and not isinstance(screen, PhotoScreen):
            screen = screen.parent
        if screen is not None:
            screen.tap((touch.x - x0) / w, 1 - (touch.y - y0) / h)
        return True

    def draw_marks(self, marks: list[dict[str, Any]], tail: tuple[float, float] | None) -> None:
        """Rings and arrows in black over a white halo (reads on any photo), as the notice draws them."""
        self.canvas.after.clear()
        x0, y0, w, h = self.shown_rect()

        def at(fx: float, fy: float) -> tuple[float, float]:
            return x0 + fx * w, y0 + (1 - fy) * h

        with self.canvas.after:
            for rgba, width in (((1, 1, 1, 1), 4.0), ((0, 0, 0, 1), 2.0)):
                Color(*rgba)
                for m in marks:
                    x, y = at(m["x"], m["y"])
                    if m["kind"] == "ring":
                        Line(circle=(x, y, max(6.0, m["x2"] * min(w, h))), width=width)
                        continue
                    hx, hy = at(m["x2"], m["y2"])
                    ang = math.atan2(hy - y, hx - x)
                    Line(points=[x, y, hx, hy], width=width)
                    for da in (2.6, -2.6):
                        Line(points=[hx, hy, hx + 14 * math.cos(ang + da), hy + 14 * math.sin(ang + da)], width=width)
                if tail is not None:
                    Line(circle=(*at(*tail), 5.0), width=width)


class PhotoScreen(Screen):
    """One beam's photos with tap-to-place marks."""

    source = StringProperty("")
    caption = StringProperty("")
    message = StringProperty("")

    def on_pre_enter(self, *args: Any) -> None:
        """Open the beam's first photo."""
        app = App.get_running_app()
        self.vm = PhotoViewModel(app.store, app.site_id, app.beam_id)
        self.vm.set_mode("ring")
        self.ids.mode_ring.state, self.ids.mode_arrow.state = "down", "normal"
        if not getattr(self, "_bound", False):  # once: redraw the marks when the photo moves or loads
            self.ids.photo.bind(size=self._redraw, pos=self._redraw, texture=self._redraw)
            self._bound = True
        self.render()

    def render(self) -> None:
        """Photo, caption, marks, message."""
        if not hasattr(self, "vm"):
            return
        self.source = self.vm.image_path()
        self.caption = self.vm.caption()
        self.message = self.vm.message
        self.ids.photo.draw_marks(self.vm.marks, self.vm.tail)

    def _redraw(self, *_: Any) -> None:
        if hasattr(self, "vm"):
            self.ids.photo.draw_marks(self.vm.marks, self.vm.tail)

    def tap(self, fx: float, fy: float) -> None:
        """Place a mark where the photo was tapped."""
        self.vm.tap(fx, fy)
        self.render()

    def set_mode(self, mode: str) -> None:
        """Rings or arrows."""
        self.vm.set_mode(mode)
        self.render()

    def undo(self) -> None:
        """Take back the last mark."""
        self.vm.undo()
        self.render()

    def save(self) -> None:
        """Store the marks beside the photo."""
        self.vm.save()
        self.render()

    def turn(self, step: int) -> None:
        """Next / previous photo."""
        self.vm.turn(step)
        self.render()
