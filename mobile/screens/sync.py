"""The sync screen (sync.kv): bundles by file with progress, a summary and conflicts to resolve."""

from __future__ import annotations

import sqlite3
import threading
from pathlib import Path
from typing import Any

from kivy.app import App
from kivy.clock import Clock
from kivy.metrics import dp
from kivy.properties import BooleanProperty, NumericProperty, StringProperty
from kivy.uix.boxlayout import BoxLayout
from kivy.uix.label import Label
from kivy.uix.screenmanager import Screen

from mobile.screens.widgets import (
    big_button,
    choose_file,
)
from mobile.viewmodels import SyncViewModel


class SyncScreen(Screen):
    """Export / import bundle files with a progress bar, a summary, and conflicts to resolve."""

    status_text = StringProperty("")
    progress = NumericProperty(0.0)
    progress_text = StringProperty("")
    summary = StringProperty("")
    busy = BooleanProperty(False)

    def on_pre_enter(self, *args: Any) -> None:
        """Show the sync state and conflicts."""
        app = App.get_running_app()
        self.vm = SyncViewModel(app.store)
        if not self.ids.export_dir.text:
            self.ids.export_dir.text = str(Path.home() / "bracewalk-sync")
        self.render()

    def render(self) -> None:
        """Status line and the conflict list with two large choices each."""
        self.status_text = self.vm.status()
        box = self.ids.conflicts
        box.clear_widgets()
        conflicts = self.vm.conflicts()
        if not conflicts:
            box.add_widget(
                Label(
                    text="No conflicts to review.",
                    font_size="17sp",
                    color=App.get_running_app().theme_fg,
                    size_hint_y=None,
                    height=dp(40),
                )
            )
        for cid, line in conflicts:
            box.add_widget(
                Label(
                    text=line,
                    font_size="16sp",
                    color=App.get_running_app().theme_fg,
                    size_hint_y=None,
                    height=dp(60),
                    halign="left",
                    valign="middle",
                    text_size=(dp(560), None),
                )
            )
            row = BoxLayout(size_hint_y=None, height="15mm", spacing=dp(6))
            row.add_widget(big_button("Keep as is", lambda _b, c=cid: self.resolve(c, "winner"), halign="center"))
            row.add_widget(
                big_button("Use the other value", lambda _b, c=cid: self.resolve(c, "loser"), halign="center")
            )
            box.add_widget(row)

    def resolve(self, conflict_id: int, keep: str) -> None:
        """Resolve one conflict."""
        self.vm.resolve(conflict_id, keep, "reviewer on this tablet")
        self.render()

    def _run(self, work: Any) -> None:
        """Run work(progress) in a worker thread; progress and the summary come back on the UI thread."""
        self.busy, self.progress, self.summary = True, 0.0, ""

        def progress(fraction: float, what: str) -> None:
            Clock.schedule_once(lambda _dt: self._progress(fraction, what))

        def worker() -> None:
            try:
                text = work(progress)
            except (OSError, ValueError, sqlite3.Error) as exc:  # shown to the reviewer; nothing was half-applied
                text = f"Failed: {exc}"
            Clock.schedule_once(lambda _dt: self._done(text))

        threading.Thread(target=worker, daemon=False).start()

    def _progress(self, fraction: float, what: str) -> None:
        self.progress, self.progress_text = fraction, what

    def _done(self, text: str) -> None:
        self.busy, self.summary = False, text
        self.render()

    def export(self) -> None:
        """Export a bundle into the folder."""
        folder = Path(self.ids.export_dir.text).expanduser()
        self._run(lambda progress: self.vm.export(folder, progress))

    def choose_bundle(self) -> None:
        """Pick a bundle file."""
        choose_file("Bundle to import", lambda p: setattr(self.ids.import_path, "text", p), ["*.bwsync"])

    def import_bundle(self) -> None:
        """Import the chosen bundle."""
        path = Path(self.ids.import_path.text).expanduser()
        if not path.is_file():
            self.summary = f"No bundle file at {path}"
            return
        self._run(lambda progress: self.vm.import_file(path, progress))
