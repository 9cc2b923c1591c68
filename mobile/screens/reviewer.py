"""The reviewer screen (reviewer.kv): who signs this device's notices, and the signature, set up once."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from kivy.app import App
from kivy.graphics import Color, Line
from kivy.properties import StringProperty
from kivy.uix.screenmanager import Screen
from kivy.uix.widget import Widget

from mobile.screens.widgets import choose_file
from mobile.viewmodels.reviewer import ReviewerViewModel

FIELDS = ("name", "designation", "licence_number", "firm", "phone", "email")


class SignaturePad(Widget):
    """Draw a signature with a finger or stylus; strokes kept in pad coordinates."""

    def __init__(self, **kwargs: Any):
        super().__init__(**kwargs)
        self.strokes: list[list[tuple[float, float]]] = []

    def on_touch_down(self, touch: Any) -> bool:
        """Start a stroke."""
        if not self.collide_point(*touch.pos):
            return False
        self.strokes.append([(touch.x - self.x, touch.y - self.y)])
        with self.canvas:
            Color(0, 0, 0, 1)
            touch.ud["line"] = Line(points=[touch.x, touch.y], width=2)
        return True

    def on_touch_move(self, touch: Any) -> bool:
        """Extend the stroke."""
        if "line" not in touch.ud or not self.collide_point(*touch.pos):
            return False
        touch.ud["line"].points += [touch.x, touch.y]
        self.strokes[-1].append((touch.x - self.x, touch.y - self.y))
        return True

    def clear(self) -> None:
        """Start again."""
        self.strokes = []
        self.canvas.clear()


class ReviewerScreen(Screen):
    """Name, designation, licence, firm, contact, seal and paper setting, and the signature."""

    message = StringProperty("")

    def on_pre_enter(self, *args: Any) -> None:
        """Fill the fields from the saved profile."""
        self.vm = ReviewerViewModel(App.get_running_app().store)
        for name in FIELDS:
            self.ids[name].text = self.vm.fields[name]
        self.ids.seal.state = "down" if self.vm.seal else "normal"
        self.ids.a4.state = "down" if self.vm.page_size == "a4" else "normal"
        self.message = "signature on file" if self.vm.signature else "no signature yet: draw it below or import one"

    def import_signature(self) -> None:
        """Choose a scanned signature image."""
        choose_file("Signature image", self._imported, ["*.png", "*.jpg", "*.jpeg"])

    def _imported(self, path: str) -> None:
        try:
            self.vm.import_signature(Path(path))
        except (OSError, ValueError) as exc:
            self.message = f"Not imported: {exc}"
            return
        self.message = f"Signature imported from {Path(path).name}; press Save"

    def save(self) -> None:
        """Take the fields (and a drawn signature) and save."""
        for name in FIELDS:
            self.vm.set(name, self.ids[name].text)
        self.vm.seal = self.ids.seal.state == "down"
        self.vm.page_size = "a4" if self.ids.a4.state == "down" else "letter"
        pad = self.ids.pad
        if pad.strokes:
            try:
                self.vm.draw_signature(pad.strokes, (pad.width, pad.height))
            except ValueError as exc:
                self.message = str(exc)
                return
        self.vm.save()
        self.message = self.vm.message
