"""The deficiency screen (deficiency.kv): edit, move the status with evidence, history."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from kivy.app import App
from kivy.factory import Factory
from kivy.properties import BooleanProperty, ListProperty, StringProperty
from kivy.uix.popup import Popup
from kivy.uix.screenmanager import Screen

from core.results import PRIORITY_ORDER
from mobile.screens.widgets import (
    big_button,
    choose_file,
)
from mobile.viewmodels import DeficiencyViewModel
from mobile.viewmodels.common import PRIORITY_LABELS


class DeficiencyScreen(Screen):
    """One deficiency: edit, move status with evidence, history."""

    title = StringProperty("")
    message = StringProperty("")
    error_text = StringProperty("")
    history_text = StringProperty("")
    evidence_text = StringProperty("Evidence photo…")
    who_text = StringProperty("")
    has_beam = BooleanProperty(False)
    is_reviewer = BooleanProperty(False)
    rereview_text = StringProperty("")
    priority_words = ListProperty([PRIORITY_LABELS[p] for p in PRIORITY_ORDER])

    @staticmethod
    def priority_code(text: str) -> str:
        """'▲ IMMEDIATE: make safe now' -> 'immediate' (the picker shows words, the record keeps the code)."""
        return next((p for p, w in PRIORITY_LABELS.items() if w == text), text)

    def on_pre_enter(self, *args: Any) -> None:
        """Load the deficiency."""
        app = App.get_running_app()
        self.vm = DeficiencyViewModel(app.store, app.deficiency_id)
        self._loading = True
        for k, v in self.vm.fields().items():
            self.ids[k].text = PRIORITY_LABELS.get(v, v) if k == "priority" else v
        self._loading = False
        self.evidence: str | None = None
        self.evidence_text = "Evidence photo…"
        self.message = ""
        self.has_beam = self.vm.deficiency().beam_id is not None
        self.render()

    def open_device_setup(self) -> None:
        """Set up the person and role this device is used by (a device setting, not a per-screen choice)."""
        form = Factory.DeviceForm()
        name, role = self.vm.device_user()
        form.ids.device_name.text, form.ids.device_role.text = name, role or "reviewer"
        popup = Popup(title="Device user", content=form, size_hint=(0.9, 0.9), title_size="20sp", auto_dismiss=False)

        def save(*_: Any) -> None:
            try:
                self.vm.store.set_device_user(form.ids.device_name.text, form.ids.device_role.text)
            except ValueError as exc:
                form.ids.device_message.text = str(exc)
                return
            popup.dismiss()
            self.render()

        form.ids.device_save.bind(on_release=save)
        form.ids.cancel.bind(on_release=lambda *_: popup.dismiss())
        self.device_popup = popup
        popup.open()

    def update_beam(self) -> None:
        """Open the beam this deficiency is on, to record what is now installed."""
        beam_id = self.vm.deficiency().beam_id
        if beam_id:
            App.get_running_app().open_beam(beam_id)

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
        name, role = self.vm.device_user()
        if not name:
            self.message = "Set up this device's user first (Device user…): moves are recorded under that name."
            return
        if self.vm.move(stage, name, role, self.ids.note.text, self.evidence):
            self.ids.note.text = ""
            self.evidence, self.evidence_text = None, "Evidence photo…"
        self.message = self.vm.message
        self.render()

    def rereview(self, outcome: str) -> None:
        """Record the re-review outcome (verified / still open) with the note and the beam's recheck."""
        name, role = self.vm.device_user()
        if self.vm.rereview(outcome, name, role, self.ids.note.text):
            self.ids.note.text = ""
        self.message = self.vm.message
        self.render()

    def render(self) -> None:
        """Title, allowed moves for the chosen role, history."""
        if not hasattr(self, "vm"):
            return
        self.title = self.vm.title()
        box = self.ids.moves
        box.clear_widgets()
        words = {"corrected": "Mark corrected", "verified": "Verify the correction", "reopen": "Reopen"}
        name, role = self.vm.device_user()
        self.who_text = f"Recorded as {name} ({role})" if name else "This device has no user set up yet"
        for stage in self.vm.moves(role):
            box.add_widget(big_button(words[stage], lambda _b, s=stage: self.move(s), halign="center"))
        self.history_text = "\n".join(self.vm.history_lines())
        self.is_reviewer = role == "reviewer"
        self.rereview_text = self.vm.rereview_text()
