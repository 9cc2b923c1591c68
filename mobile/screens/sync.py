"""The sync screen (sync.kv): the office hub (enrol, sync now, automatic sync), bundle files, conflicts.

Automatic sync runs in the app (``app.background``, a ``BackgroundSync`` polled by a timer), so it goes on
on every screen; this screen shows its state, refreshed twice a second while it is open.
"""

from __future__ import annotations

import sqlite3
import threading
import time
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
    """The office hub, bundle files with a progress bar and a summary, and conflicts to resolve."""

    status_text = StringProperty("")
    hub_text = StringProperty("")
    waiting_text = StringProperty("")
    clock_text = StringProperty("")
    held_text = StringProperty("")
    aside_text = StringProperty("")  # changes pulled from the office whose signature did not verify
    held_bundles_text = StringProperty("")  # bundles held for a newer app: readable now, or still waiting
    held_readable = BooleanProperty(False)  # some held bundle can be applied now (the button shows)
    progress = NumericProperty(0.0)
    progress_text = StringProperty("")
    summary = StringProperty("")
    busy = BooleanProperty(False)  # a bundle or an enrolment is under way on this screen
    syncing = BooleanProperty(False)  # the background sync is under way
    enrolled = BooleanProperty(False)
    enrolled_text = StringProperty("")  # where this tablet is enrolled ('' before)
    enrol_open = BooleanProperty(False)  # the enrolment form unfolded again on an enrolled tablet
    form_shown = BooleanProperty(True)  # the enrolment form: before enrolment, or unfolded again
    _timer: Any = None
    _shown_finish: float | None = None

    def on_enrolled(self, _screen: Any, _value: bool) -> None:
        """Fold the enrolment form away once enrolled."""
        self.form_shown = self.enrol_open or not self.enrolled

    def on_enrol_open(self, _screen: Any, _value: bool) -> None:
        """Unfold the enrolment form ("Enrol again") and bring it into view, or fold it away."""
        self.form_shown = self.enrol_open or not self.enrolled
        view = self.ids.send_receive
        if self.enrol_open:  # once the form is laid out (the next frame), scroll to its code field
            Clock.schedule_once(lambda _dt: view.scroll_to(self.ids.enrol_code, animate=False))
        else:  # folded again (enrolled): back to the top, where the hub's state is
            view.scroll_y = 1

    def on_pre_enter(self, *args: Any) -> None:
        """Show the sync state and conflicts; follow the background sync while the screen is open."""
        app = App.get_running_app()
        self.vm = SyncViewModel(app.store)
        if not self.ids.export_dir.text:
            self.ids.export_dir.text = str(Path.home() / "bracewalk-sync")
        if not self.ids.hub_url.text:
            self.ids.hub_url.text = self.vm.hub_url()
        self.render()
        if self._timer is None:
            self._timer = Clock.schedule_interval(lambda _dt: self.follow(), 0.5)

    def on_leave(self, *args: Any) -> None:
        """Stop following the background sync (it goes on)."""
        if self._timer is not None:
            self._timer.cancel()
            self._timer = None

    def follow(self) -> None:
        """Show the background sync's progress; render again when a sync has finished."""
        bg = App.get_running_app().background
        self.syncing = bg.busy
        if bg.busy:
            self.progress, self.progress_text = bg.progress
        if bg.finished_at_s is not None and bg.finished_at_s != self._shown_finish:
            self._shown_finish = bg.finished_at_s
            self.summary = bg.summary
            self.progress, self.progress_text = 1.0, ""
            self.render()

    def render(self) -> None:
        """Hub state, what waits, the clock warning, what the office held back, and the conflicts."""
        self.status_text = "Bundle files: " + self.vm.status()
        self.held_bundles_text = self.vm.held_bundles_text()
        self.held_readable = self.vm.has_readable_held()
        self.hub_text = self.vm.hub_status()
        self.enrolled = bool(self.vm.hub_url())
        self.enrolled_text = self.vm.enrolled_note()
        self.waiting_text = self.vm.waiting().capitalize() if self.enrolled else ""
        if self.enrolled and App.get_running_app().background.auto.failing:
            self.waiting_text += ". Kept here; it is sent by itself as soon as the office answers."
        self.clock_text = self.vm.clock_warning()
        held = self.vm.held_back()
        self.held_text = "\n".join(f"• {line}" for line in held) if held else "Nothing held back."
        aside = self.vm.set_aside()
        self.aside_text = "\n".join(f"• {line}" for line in aside) if aside else "Nothing set aside."
        self._render_conflicts()

    def _render_conflicts(self) -> None:
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

    def enroll(self) -> None:
        """Enrol this tablet at the hub with the office's one-time code (in a worker thread), then sync."""
        url, code = self.ids.hub_url.text.strip(), self.ids.enrol_code.text.strip()
        if not code:
            self.summary = "Enter the enrolment code the office gave you"
            return

        def work(progress: Any) -> str:
            progress(0.2, "enrolling at the office hub")
            text = self.vm.enroll(url, code)
            if text.startswith("Enrolled"):
                Clock.schedule_once(lambda _dt: self._enrolled())
            return text

        self._run(work)

    def _enrolled(self) -> None:
        self.ids.enrol_code.text = ""  # the code is spent
        self.enrol_open = False  # fold the form away again
        self.sync_now()

    def sync_now(self) -> None:
        """Sync with the hub now (the background sync runs it: one sync at a time)."""
        bg = App.get_running_app().background
        bg.sync_soon(time.monotonic())
        bg.poll(time.monotonic())
        self.follow()

    def export(self) -> None:
        """Export a bundle into the folder."""
        folder = Path(self.ids.export_dir.text).expanduser()
        self._run(lambda progress: self.vm.export(folder, progress))

    def choose_bundle(self) -> None:
        """Pick a bundle file."""
        choose_file("Bundle to import", lambda p: setattr(self.ids.import_path, "text", p), ["*.bwsync"])

    def apply_held(self) -> None:
        """Apply the bundles held until this app was updated (in a worker thread, with progress)."""
        self._run(self.vm.apply_held)

    def import_bundle(self) -> None:
        """Import the chosen bundle."""
        path = Path(self.ids.import_path.text).expanduser()
        if not path.is_file():
            self.summary = f"No bundle file at {path}"
            return
        self._run(lambda progress: self.vm.import_file(path, progress))
