"""The beam screen (beam.kv): the form with the live recheck beside it."""

from __future__ import annotations

import time
from typing import Any

from kivy.app import App
from kivy.clock import Clock
from kivy.factory import Factory
from kivy.metrics import dp
from kivy.properties import NumericProperty, StringProperty
from kivy.uix.boxlayout import BoxLayout
from kivy.uix.button import Button
from kivy.uix.label import Label
from kivy.uix.screenmanager import Screen

from mobile.screens.widgets import (
    PickField,
    TextField,
    UtilBar,
    big_button,
    choose_file,
    info_popup,
    restraint_colour,
    status_colour,
)
from mobile.viewmodels import BeamFormViewModel
from mobile.viewmodels.beam import NEXT_RESTRAINT, RESTRAINT_WORDS

TYPING_PAUSE_S = 0.35  # save this long after the last keystroke (and at once on Enter or leaving the field)


class BeamScreen(Screen):
    """Log / edit a beam with the live recheck beside the form."""

    title = StringProperty("")
    immediate_text = StringProperty("")
    photo_text = StringProperty("Photos: 0")
    refresh_ms = NumericProperty(0.0)

    def on_kv_post(self, base_widget: Any) -> None:
        """Index the form's fields by name."""
        self.fields: dict[str, Any] = {}
        for w in self.walk(restrict=True):
            if isinstance(w, TextField | PickField):
                w.screen = self
                self.fields[w.name] = w
        self._pending: dict[str, str] = {}
        self._echoed: set[str] = set()  # fields accepted since the last redraw: show them back with their unit
        self._event: Any = None

    def on_pre_enter(self, *args: Any) -> None:
        """Load the beam into the form."""
        app = App.get_running_app()
        self.vm = BeamFormViewModel(app.store, app.site_id, app.beam_id)
        self._panel_shape = self._bearing_shape = None  # a new beam or theme: build the widgets afresh
        self.raised_text = ""
        self.load_form()
        self.render()

    def load_form(self) -> None:
        """Put every stored value (or kept draft) into its widget."""
        values = self.vm.form()
        self.show_title()
        for name, w in self.fields.items():
            w.loading = True
            if isinstance(w, PickField):
                w.values = self.vm.options(name)
            if isinstance(w, TextField) and w.quick:
                w.quick_values = self.vm.quick_sizes(name)
            w.ids.input.text = values.get(name, "")
            self._show_messages(name, w)
            w.loading = False
        self.build_bearings(values)
        self.photo_text = f"Photos: {self.vm.photo_count()}"

    def show_title(self) -> None:
        """'RB-5  ·  Roof  ·  grid E / 3-4'."""
        rec = self.vm.record()
        self.title = f"{rec.get('mark')}  ·  {rec.get('level') or ''}  ·  grid {rec.get('gridline') or ''}"

    def build_bearings(self, values: dict[str, str]) -> None:
        """One row per support: lateral and rotation as large three-state toggles, and bearing length."""
        shape = (
            sorted((k, v) for k, v in values.items() if k.startswith("bearing")),
            sorted((k, v) for k, v in self.vm.errors.items() if k.startswith("bearing")),
        )
        if shape == getattr(self, "_bearing_shape", None):
            return
        self._bearing_shape = shape
        box = self.ids.bearings
        box.clear_widgets()
        for i in range(1, self.vm.support_count() + 1):
            row = BoxLayout(size_hint_y=None, height="15mm", spacing=dp(6))
            row.add_widget(
                Label(
                    text=f"S{i}",
                    font_size="19sp",
                    bold=True,
                    color=App.get_running_app().theme_fg,
                    size_hint_x=None,
                    width="12mm",
                )
            )
            for key, word in (("lateral", "lateral"), ("rotation", "rotation")):
                state = values.get(f"bearing{i}.{key}", "not_visible")
                b = big_button(
                    f"{word}: {RESTRAINT_WORDS[state]}",
                    lambda _b, n=i, k=key: self.cycle(n, k),
                    bg=restraint_colour(state),
                    halign="center",
                    font_size="17sp",
                )
                b.color = (0, 0, 0, 1) if state != "no" else (1, 1, 1, 1)
                setattr(self, f"bearing{i}_{key}", b)
                row.add_widget(b)
            length = Factory.BigInput(hint_text="length", size_hint_x=0.3)
            length.text = values.get(f"bearing{i}.length_mm", "")
            length.bind(
                text=lambda w, t, n=f"bearing{i}.length_mm": self.typed(n, t),
                focus=lambda w, f, n=f"bearing{i}.length_mm": None if f else self.commit(n),
            )
            row.add_widget(length)
            box.add_widget(row)
        problems = [f"{k}: {v}" for k, v in self.vm.errors.items() if k.startswith("bearing")]
        if problems:
            box.add_widget(Factory.FieldError(text="\n".join(problems)))

    # -- entry ---------------------------------------------------------------------------------
    def typed(self, name: str, text: str) -> None:
        """Keystroke: remember it and save after a short pause."""
        self._pending[name] = text
        if self._event is not None:
            self._event.cancel()
        self._event = Clock.schedule_once(lambda _dt: self.flush(), TYPING_PAUSE_S)

    def commit(self, name: str) -> None:
        """Enter or focus lost: save now."""
        if name in self._pending:
            self.flush()

    def flush(self) -> None:
        """Save every pending entry, then redraw the recheck."""
        pending, self._pending = self._pending, {}
        for name, text in pending.items():
            if self.vm.set_field(name, text) and name in self.fields:
                self._echoed.add(name)
        if pending:
            self.after_change(reload="spans" in pending or "material" in pending or "species" in pending)

    def set_now(self, name: str, text: str) -> None:
        """A picker or toggle: save at once."""
        self.flush()
        self.vm.set_field(name, text)
        self.after_change(reload=name in ("material", "species", "top_braced_by", "bottom_braced_by"))

    def cycle(self, support: int, key: str) -> None:
        """Large toggle: yes -> no -> not visible -> yes."""
        current = self.vm.form().get(f"bearing{support}.{key}", "not_visible")
        self.set_now(f"bearing{support}.{key}", NEXT_RESTRAINT[current])

    def _show_messages(self, name: str, w: Any) -> None:
        """The field's message, the offered reading and the echo of the value in force."""
        w.error = self.vm.errors.get(name, "")
        if isinstance(w, TextField):
            w.suggestion = self.vm.suggestions.get(name, "") if w.error else ""
            w.echo = "" if w.error else self.vm.echo(name)

    def after_change(self, reload: bool = False) -> None:
        """Show messages at the fields and refresh the recheck panel (and dependent pickers)."""
        if reload:
            self.load_form()
        else:
            values = self.vm.form()
            self.build_bearings(values)
        for name, w in self.fields.items():
            self._show_messages(name, w)
            if isinstance(w, TextField) and name in self._echoed and not w.ids.input.focus:
                w.loading = True
                w.ids.input.text = self.vm.form().get(name, "")  # the value in force, with its unit
                w.loading = False
        self._echoed.clear()
        self.show_title()
        self.render()

    def undo(self) -> None:
        """Undo the last change."""
        self.flush()
        if self.vm.undo():
            self.load_form()
            self.render()

    def add_photo(self) -> None:
        """Attach a photo (file chooser on a desktop)."""

        def chosen(path: str) -> None:
            self.vm.add_photo(path)
            self.photo_text = f"Photos: {self.vm.photo_count()}"

        choose_file("Attach a photo to this beam", chosen, ["*.jpg", "*.jpeg", "*.png", "*.JPG"])

    def raise_finding(self, index: int) -> None:
        """Raise a deficiency from a finding."""
        number = self.vm.raise_deficiency(index)
        self.raised_text = f"Raised {number}"
        self.render()

    def leave(self) -> None:
        """Back to the site (pending typing saved first)."""
        self.flush()
        App.get_running_app().go("site")

    # -- the live recheck --------------------------------------------------------------------------
    def render(self) -> None:
        """Redraw the immediate banner, the recheck lines with utilisation bars, and the findings.

        When the panel has the same lines as before (the usual case while typing) the widgets are
        updated in place; rebuilding them on every entry made garbage-collection pauses visible.
        """
        t0 = time.perf_counter()
        if self.vm.result is None and not self.vm.recheck_error:
            self.vm.refresh()
        self.immediate_text = "\n".join("▲ IMMEDIATE: " + x for x in self.vm.immediate_findings())
        lines, findings = self.vm.panel_lines(), self.vm.findings()
        shape = ([(key, util is None) for _, util, key in lines], len(findings), getattr(self, "raised_text", ""))
        if shape != getattr(self, "_panel_shape", None):
            self._build_panel(lines, findings)
            self._panel_shape = shape
        status, *rows = lines
        self._status.text = status[0]
        self._status.background_color = status_colour(status[0].split(": ", 1)[1])
        for (text, util, _key), (line, bar) in zip(rows, self._rows, strict=True):
            line.text = text
            if bar is not None and util is not None:
                bar.show(util)
        for (_i, text), label in zip(findings, self._finding_labels, strict=True):
            label.text = text
        self.refresh_ms = (time.perf_counter() - t0) * 1000

    def _build_panel(self, lines: list[tuple[str, float | None, str]], findings: list[tuple[int, str]]) -> None:
        app = App.get_running_app()
        panel = self.ids.panel
        panel.clear_widgets()
        self._status = big_button("", lambda *_: None, font_size="22sp", halign="center", bold=True)
        panel.add_widget(self._status)
        self._rows: list[tuple[Button, UtilBar | None]] = []
        for _text, util, key in lines[1:]:
            row = BoxLayout(orientation="vertical", size_hint_y=None, height="21mm" if util is not None else "15mm")
            line = Button(
                font_size="16sp",
                color=app.theme_fg,
                background_normal="",
                background_color=(0, 0, 0, 0),
                halign="left",
                valign="middle",
            )
            line.bind(size=lambda w, s: setattr(w, "text_size", s))
            if key:
                line.bind(on_release=lambda b, k=key: info_popup(b.text, self.vm.trace_lines(k)))
            row.add_widget(line)
            bar = UtilBar() if util is not None else None
            if bar is not None:
                row.add_widget(bar)
            panel.add_widget(row)
            self._rows.append((line, bar))
        self._finding_labels: list[Label] = []
        for index, _text in findings:
            label = Label(font_size="16sp", color=app.theme_fg, size_hint_y=None, halign="left", valign="top")
            label.bind(
                width=lambda w, v: setattr(w, "text_size", (v, None)),
                texture_size=lambda w, ts: setattr(w, "height", ts[1] + dp(8)),
            )
            panel.add_widget(label)
            self._finding_labels.append(label)
            panel.add_widget(
                big_button(
                    f"Raise deficiency from finding {index + 1}",
                    lambda _b, i=index: self.raise_finding(i),
                    halign="center",
                )
            )
        if getattr(self, "raised_text", ""):
            panel.add_widget(
                Label(
                    text=self.raised_text,
                    font_size="18sp",
                    bold=True,
                    color=app.theme_fg,
                    size_hint_y=None,
                    height=dp(40),
                )
            )
