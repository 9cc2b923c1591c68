"""The beam screen (beam.kv): the form with the live recheck beside it."""

from __future__ import annotations

import time
from typing import Any

from kivy.app import App
from kivy.clock import Clock
from kivy.factory import Factory
from kivy.metrics import dp, mm
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
    done_look,
    info_popup,
    restraint_colour,
    status_colour,
)
from mobile.viewmodels import BeamFormViewModel
from mobile.viewmodels.beam import RESTRAINT_WORDS, words
from mobile.viewmodels.common import default_export_dir
from mobile.viewmodels.site import KEEP

TYPING_PAUSE_S = 0.35  # save this long after the last keystroke (and at once on Enter or leaving the field)
# the opened IMMEDIATE banner's view at most this share of the screen's height (the rest scrolls in it): at the
# review's geometries the form and the recheck keep at least 25 mm each beside or under it
BANNER_OPEN_SHARE = 0.4


ARCHIVE_PROMPT = "Archive this beam (logged by mistake)…"
COPY_PROMPT = "Copy member, bracing, loads from…"


class BeamScreen(Screen):
    """Log / edit a beam with the live recheck beside the form."""

    title = StringProperty("")
    immediate_text = StringProperty("")  # every IMMEDIATE finding with its action (the banner unfolded)
    immediate_short = StringProperty("")  # the banner folded: priority, count, what about
    photo_text = StringProperty("Photos: 0")
    refresh_ms = NumericProperty(0.0)
    archive_text = StringProperty(ARCHIVE_PROMPT)

    def on_kv_post(self, base_widget: Any) -> None:
        """Index the form's fields by name."""
        self.fields: dict[str, Any] = {}
        for w in self.walk(restrict=True):
            if isinstance(w, TextField | PickField):
                w.screen = self
                self.fields[w.name] = w
        self._pending: dict[str, str] = {}
        self._event: Any = None

    def on_pre_enter(self, *args: Any) -> None:
        """Load the beam into the form."""
        app = App.get_running_app()
        self.vm = BeamFormViewModel(app.store, app.site_id, app.beam_id)
        self._panel_shape: object = None  # a new beam or theme: build the widgets afresh
        self._bearing_shape: object = None
        self.raised_text = ""
        self.archive_text = ARCHIVE_PROMPT
        self.ids.form_scroll.scroll_y = 1  # another beam: start at the top of its form
        self.ids.panel_scroll.scroll_y = 1  # and of its recheck, the status first (not the last beam's findings)
        self.ids.immediate.folded = True
        self.load_form()
        self.render()
        self.ids.caution.folded = bool(self.immediate_text)

    def _show_immediate(self, text: str) -> None:
        """The IMMEDIATE banner's text; the caution folds when a banner appears and unfolds when it goes."""
        if bool(text) != bool(self.immediate_text):
            self.ids.caution.folded = bool(text)
        self.immediate_text = text
        self.immediate_short = self.vm.immediate_summary() if text else ""

    def load_form(self) -> None:
        """Put every stored value (or kept draft) into its widget."""
        values = self.vm.form()
        self.show_title()
        for name, w in self.fields.items():
            w.loading = True
            if isinstance(w, PickField):
                w.values = [words(v) for v in self.vm.options(name)]
            if isinstance(w, TextField) and w.quick:
                w.quick_values = self.vm.quick_sizes(name)
            w.ids.input.text = self.shown(name, values)
            self._show_messages(name, w)
            w.loading = False
        self.place_system(values.get("material") == "sawn")
        self.build_bearings(values)
        self._copy_choices = self.vm.copy_choices()
        self.ids.copy_from.values = [t for _, t in self._copy_choices]
        self.photo_text = f"Photos: {self.vm.photo_count()}"

    def place_system(self, sawn: bool) -> None:
        """The system picker on the form, under the grade, for a sawn member only (glulam takes KH 1.0 alone).

        Taken out of the form rather than hidden, so nothing of it lies over its neighbours; ``fields`` keeps it.
        """
        picker, form = self.fields["system"], self.ids.form
        if sawn and picker.parent is None:
            form.add_widget(picker, index=form.children.index(self.fields["grade"]))
        elif not sawn and picker.parent is not None:
            form.remove_widget(picker)

    def copy_picked(self, text: str) -> None:
        """'copy from RB-1' picked: copy member, bracing and loads (never span or bearings), then reset."""
        choice = next((bid for bid, t in getattr(self, "_copy_choices", []) if t == text), None)
        if choice is None:
            return
        self.flush()
        self.vm.copy_from(choice)
        self.ids.copy_from.text = COPY_PROMPT
        self.load_form()
        self.render()

    def show_title(self) -> None:
        """'RB-5  ·  Roof  ·  grid E / 3-4', each part kept whole when the title wraps (no-break spaces inside)."""
        rec = self.vm.record()
        grid = f"grid {rec['gridline']}" if rec.get("gridline") else ""
        parts = (str(x).replace(" ", KEEP) for x in (rec.get("mark"), rec.get("level"), grid) if x)
        self.title = "  ·  ".join(parts)

    def build_bearings(self, values: dict[str, str]) -> None:
        """Per support: bearing length, then lateral and rotation each chosen directly (three large buttons).

        Each pair of restraint rows is named on a line above its buttons, so the three share the column's
        whole width: beside a 42 mm label they were too narrow for a word ('No restrai / nt').
        """
        shape = (
            sorted((k, v) for k, v in values.items() if k.startswith("bearing")),
            sorted((k, v) for k, v in self.vm.errors.items() if k.startswith("bearing")),
        )
        if shape == getattr(self, "_bearing_shape", None):
            return
        self._bearing_shape = shape
        app = App.get_running_app()
        box = self.ids.bearings
        box.clear_widgets()
        self.restraint_buttons: dict[tuple[int, str, str], Any] = {}
        self.length_inputs: dict[int, Any] = {}
        for i in range(1, len(self.vm.record().get("bearings") or []) + 1):
            row = BoxLayout(size_hint_y=None, height="15mm", spacing=dp(6))
            row.add_widget(Factory.FieldLabel(text=f"S{i} length (mm)", bold=True))
            length = Factory.BigInput(hint_text="not yet entered")
            length.text = values.get(f"bearing{i}.length_mm", "")
            length.bind(
                text=lambda _w, t, n=f"bearing{i}.length_mm": self.typed(n, t),
                focus=lambda _w, f, n=f"bearing{i}.length_mm": None if f else self.commit(n),
            )
            row.add_widget(length)
            self.length_inputs[i] = length
            box.add_widget(row)
            for key in ("lateral", "rotation"):
                box.add_widget(Factory.Wrapped(text=f"S{i} {key} restraint"))
                row = BoxLayout(size_hint_y=None, height="15mm", spacing=dp(6))
                chosen = values.get(f"bearing{i}.{key}", "")
                for state in ("yes", "no", "not_visible"):
                    on = state == chosen
                    b = big_button(
                        ("✔ " if on else "") + RESTRAINT_WORDS[state].split(",")[0],
                        lambda _b, n=i, k=key, st=state: self.set_now(f"bearing{n}.{k}", st),
                        bg=restraint_colour(state) if on else app.theme_button,
                        halign="center",
                        font_size="17sp",
                        bold=on,
                    )
                    b.color = (1, 1, 1, 1) if (state == "no" or not on) else (0, 0, 0, 1)
                    self.restraint_buttons[(i, key, state)] = b
                    row.add_widget(b)
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
            self.vm.set_field(name, text)
        if pending:
            self.after_change(reload="spans" in pending or "material" in pending or "species" in pending)

    def shown(self, name: str, values: dict[str, str]) -> str:
        """A field's text on screen: pickers in the trade's words ('Roof, no ceiling'), text as stored."""
        value = values.get(name, "")
        return words(value) if self.vm.is_picker(name) and value else value

    def set_now(self, name: str, text: str) -> None:
        """A picker or toggle: save at once (a picker's words are mapped back to the stored choice)."""
        self.flush()
        if self.vm.is_picker(name) and not name.startswith("bearing"):
            text = next((v for v in self.vm.options(name) if words(v) == text), text)
        self.vm.set_field(name, text)
        self.after_change(reload=name in ("material", "species", "top_braced_by", "bottom_braced_by", "load_basis"))

    def _show_messages(self, name: str, w: Any) -> None:
        """The field's message, the offered reading and the echo of the value in force."""
        w.error = self.vm.errors.get(name, "")
        if isinstance(w, TextField):
            w.suggestion = self.vm.suggestions.get(name, "") if w.error else ""
            w.echo = "" if w.error else self.vm.echo(name)

    def after_change(self, reload: bool = False) -> None:
        """Show every field as it now stands (derived values follow their source), messages, and the recheck.

        No field keeps a stale value: after any entry each field not being typed in is set from the
        stored record (a refused picker goes back to the value in force; typed text that was refused
        is kept as its draft).
        """
        values = self.vm.form()
        if reload:
            self.load_form()
        else:
            self.build_bearings(values)
        for name, w in self.fields.items():
            self._show_messages(name, w)
            if name in self._pending or (isinstance(w, TextField) and w.ids.input.focus):
                continue
            if w.ids.input.text != values.get(name, ""):
                w.loading = True
                w.ids.input.text = self.shown(name, values)
                w.loading = False
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

    def archive(self) -> None:
        """Archive a beam logged by mistake: a second tap confirms; it leaves the lists, stays in the history."""
        if self.archive_text == ARCHIVE_PROMPT:
            self.archive_text = "Tap again to archive (it leaves the lists; its history is kept)"
            return
        self.flush()
        self.vm.archive()
        self.archive_text = ARCHIVE_PROMPT
        App.get_running_app().go("site")

    def write_sheet(self) -> None:
        """Write the beam's recheck sheet (PDF) to the export folder and say where, or why not."""
        self.flush()
        out_dir = default_export_dir()
        try:
            path = self.vm.write_sheet(out_dir)
        except ValueError as exc:
            info_popup("Recheck sheet", [str(exc)])
            return
        except OSError as exc:
            info_popup("Recheck sheet", [f"cannot write into {out_dir}: {exc.strerror or exc}"])
            return
        info_popup(
            "Recheck sheet written",
            [
                str(path),
                "The inputs in words, the load cases and reactions, every check with each factor's clause and "
                "table row, and the findings; for the engineer of record to check and sign.",
            ],
        )

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
        self._show_immediate("\n".join("▲ IMMEDIATE: " + x for x in self.vm.immediate_findings()))
        lines, findings = self.vm.panel_lines(), self.vm.findings()
        raised = tuple(self.vm.raised_number(i) for i, _ in findings)
        shape = (
            [(key, util is None) for _, util, key in lines],
            len(findings),
            getattr(self, "raised_text", ""),
            raised,
        )
        if shape != getattr(self, "_panel_shape", None):
            self._build_panel(lines, findings)
            self._panel_shape = shape
        status, *rows = lines
        self._status.text = status[0]
        self._status.background_color = status_colour(self.vm.status())
        for (text, util, _key), (line, bar) in zip(rows, self._rows, strict=True):
            line.text = text
            if bar is not None and util is not None:
                bar.show(util)
        self._rows_button.text = self.vm.table_rows_line()
        self._rows_button.opacity = 1 if self._rows_button.text else 0
        self._rows_button.disabled = not self._rows_button.text
        for (_i, text), label in zip(findings, self._finding_labels, strict=True):
            label.text = text
        self.refresh_ms = (time.perf_counter() - t0) * 1000

    def _build_panel(self, lines: list[tuple[str, float | None, str]], findings: list[tuple[int, str]]) -> None:
        app = App.get_running_app()
        panel = self.ids.panel
        panel.clear_widgets()
        self._status = big_button("", lambda *_: None, font_size="22sp", halign="center", bold=True)
        self._status.bind(texture_size=lambda w, ts: setattr(w, "height", max(mm(15), ts[1] + dp(16))))
        panel.add_widget(self._status)
        self._rows: list[tuple[Button, UtilBar | None]] = []
        for _text, util, key in lines[1:]:
            row = BoxLayout(orientation="vertical", size_hint_y=None)
            row.bind(minimum_height=row.setter("height"))  # the line as tall as its text, then its bar
            line = Button(
                font_size="16sp",
                color=app.theme_fg,
                background_normal="",
                background_color=(0, 0, 0, 0),
                halign="left",
                valign="middle",
                size_hint_y=None,
                height=mm(15),
            )
            line.bind(
                width=lambda w, v: setattr(w, "text_size", (v - dp(8), None)),
                texture_size=lambda w, ts: setattr(w, "height", max(mm(15), ts[1] + dp(10))),
            )
            if key:
                line.bind(on_release=lambda b, k=key: info_popup(b.text, self.vm.trace_lines(k)))
            row.add_widget(line)
            bar = UtilBar() if util is not None else None
            if bar is not None:
                row.add_widget(bar)
            panel.add_widget(row)
            self._rows.append((line, bar))
        self._rows_button = big_button(
            "",
            lambda *_: info_popup("Table rows this recheck used", self.vm.table_row_lines()),
            font_size="16sp",
            halign="left",
            grow=True,
        )
        panel.add_widget(self._rows_button)
        self._finding_labels: list[Label] = []
        for index, _text in findings:
            label = Label(font_size="16sp", color=app.theme_fg, size_hint_y=None, halign="left", valign="top")
            label.bind(
                width=lambda w, v: setattr(w, "text_size", (v, None)),
                texture_size=lambda w, ts: setattr(w, "height", ts[1] + dp(8)),
            )
            panel.add_widget(label)
            self._finding_labels.append(label)
            number = self.vm.raised_number(index)
            button = big_button(
                f"✔ Finding {index + 1} raised as {number}" if number else f"Raise deficiency from finding {index + 1}",
                lambda _b, i=index: self.raise_finding(i),
                halign="center",
                grow=True,
            )
            if number:
                done_look(button)  # never raised twice; its number readable
            panel.add_widget(button)
        if getattr(self, "raised_text", ""):
            panel.add_widget(Factory.Wrapped(text=self.raised_text, font_size="18sp", bold=True, halign="center"))
