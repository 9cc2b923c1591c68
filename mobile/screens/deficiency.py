"""The deficiency screen (deficiency.kv): edit, move the status with evidence, history."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from kivy.app import App
from kivy.properties import StringProperty
from kivy.uix.screenmanager import Screen

from mobile.screens.widgets import (
    big_button,
    choose_file,
)
from mobile.viewmodels import DeficiencyViewModel


class DeficiencyScreen(Screen):
    """One deficiency: edit, move status with evidence, history."""

    title = StringProperty("")
    message = StringProperty("")
    error_text = StringProperty("")
    history_text = StringProperty("")
    evidence_text = StringProperty("Evidence photo…")

    def on_pre_enter(self, *args: Any) -> None:
        """Load the deficiency."""
        app = App.get_running_app()
        self.vm = DeficiencyViewModel(app.store, app.deficiency_id)
        self._loading = True
        for k, v in self.vm.fields().items():
            self.ids[k].text = v
        self._loading = False
        self.evidence: str | None = None
        self.evidence_text = "Evidence photo…"
        self.message = ""
        self.render()

    def edit(self, name: str, text: str) -> None:
        """Save an edited field."""
        if getattr(self, "_loading", True):
            return
        self.vm.edit(name, text)
        self.error_text = "\n".join(self.vm.errors.values())
        self.title = self.vm.title()

    def choose_evidence(self) -> None:
        """Pick a photo to attach to the next status move."""

        def chosen(path: str) -> None:
            self.evidence = path
            self.evidence_text = f"Photo: {Path(path).name}"

        choose_file("Evidence photo", chosen, ["*.jpg", "*.jpeg", "*.png", "*.JPG"])

    def move(self, stage: str) -> None:
        """Move the status."""
        if self.vm.move(stage, self.ids.actor.text, self.ids.role.text, self.ids.note.text, self.evidence):
            self.ids.note.text = ""
            self.evidence, self.evidence_text = None, "Evidence photo…"
        self.message = self.vm.message
        self.render()

    def render(self) -> None:
        """Title, allowed moves for the chosen role, history."""
        if not hasattr(self, "vm"):
            return
        self.title = self.vm.title()
        box = self.ids.moves
        box.clear_widgets()
        words = {"corrected": "Mark corrected", "verified": "Verify (reviewer)", "reopen": "Reopen"}
        for stage in self.vm.moves(self.ids.role.text):
            box.add_widget(big_button(words[stage], lambda _b, s=stage: self.move(s), halign="center"))
        self.history_text = "\n".join(self.vm.history_lines())
