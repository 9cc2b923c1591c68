"""The Kivy tablet app: thin screens over the plain-Python view models (mobile/viewmodels/).

Screens (one .kv file each in mobile/kv/): sites, site, beam, deficiency, notice, sync. Every
field is saved as it is entered (debounced while typing, at once on Enter or leaving the field),
so a killed app loses nothing typed. Long work (sync) runs in a worker thread with its own
database connection; the recheck (a few milliseconds) runs on the UI thread after each entry.
"""

from __future__ import annotations

import os
import sqlite3
import tempfile
import threading
import time
from pathlib import Path
from typing import Any

from kivy.config import Config

Config.set("graphics", "width", os.environ.get("BRACEWALK_WIDTH", "1280"))  # 10-inch tablet, landscape
Config.set("graphics", "height", os.environ.get("BRACEWALK_HEIGHT", "800"))
Config.set("kivy", "exit_on_escape", "0")
Config.set("input", "mouse", "mouse,disable_multitouch")  # no pinch or multi-finger gestures needed

from kivy.app import App  # noqa: E402
from kivy.clock import Clock  # noqa: E402
from kivy.core.text import DEFAULT_FONT, LabelBase  # noqa: E402
from kivy.factory import Factory  # noqa: E402
from kivy.lang import Builder  # noqa: E402
from kivy.metrics import dp  # noqa: E402
from kivy.properties import BooleanProperty, ListProperty, NumericProperty, StringProperty  # noqa: E402
from kivy.uix.boxlayout import BoxLayout  # noqa: E402
from kivy.uix.button import Button  # noqa: E402
from kivy.uix.filechooser import FileChooserListView  # noqa: E402
from kivy.uix.gridlayout import GridLayout  # noqa: E402
from kivy.uix.label import Label  # noqa: E402
from kivy.uix.popup import Popup  # noqa: E402
from kivy.uix.screenmanager import NoTransition, Screen, ScreenManager  # noqa: E402
from kivy.uix.scrollview import ScrollView  # noqa: E402

from core.results import CAUTION  # noqa: E402
from mobile.viewmodels import (  # noqa: E402
    BeamFormViewModel,
    DeficiencyViewModel,
    NoticeViewModel,
    SitesViewModel,
    SiteViewModel,
    SyncViewModel,
)
from mobile.viewmodels.beam import NEXT_RESTRAINT, RESTRAINT_WORDS  # noqa: E402
from storage import Store  # noqa: E402

KV = Path(__file__).with_name("kv")
SCREENS = ("sites", "site", "beam", "deficiency", "notice", "sync")
_FONTS = Path(__file__).resolve().parents[1] / "reports" / "fonts"
# DejaVu Sans covers the status shapes and symbols (phi, <=, arrows) that Kivy's default font lacks
LabelBase.register(DEFAULT_FONT, str(_FONTS / "DejaVuSans.ttf"), fn_bold=str(_FONTS / "DejaVuSans-Bold.ttf"))
# background, text, button, button text, input, alert text, caution band
THEMES = {
    "sun": dict(
        bg=(1, 1, 1, 1),
        fg=(0, 0, 0, 1),
        button=(0.13, 0.2, 0.35, 1),
        button_fg=(1, 1, 1, 1),
        input=(1, 1, 0.94, 1),
        alert=(0.7, 0, 0, 1),
        band=(1, 0.93, 0.7, 1),
    ),
    "dim": dict(
        bg=(0.07, 0.07, 0.08, 1),
        fg=(0.86, 0.84, 0.78, 1),
        button=(0.2, 0.22, 0.26, 1),
        button_fg=(0.9, 0.88, 0.82, 1),
        input=(0.14, 0.14, 0.15, 1),
        alert=(1, 0.55, 0.45, 1),
        band=(0.2, 0.17, 0.1, 1),
    ),
}
PREVIEW_DIR = Path(tempfile.gettempdir()) / "bracewalk-preview"  # page images of the notice being previewed
TYPING_PAUSE_S = 0.35  # save this long after the last keystroke (and at once on Enter or leaving the field)
KEYPAD_KEYS = ("7", "8", "9", "⌫", "4", "5", "6", "'", "1", "2", "3", '"', "0", ".", "/", "␣", "m", "mm", ",", "OK")


def default_db() -> Path:
    """The per-user database (created with the demo site on first run)."""
    base = Path(os.environ.get("BRACEWALK_HOME", Path.home() / ".bracewalk"))
    base.mkdir(parents=True, exist_ok=True)
    return base / "bracewalk.db"


def big_button(text: str, on_release: Any, **kw: Any) -> Button:
    """A 15 mm button in the theme's colours (for rows built in Python)."""
    app = App.get_running_app()
    b = Button(
        text=text,
        font_size=kw.pop("font_size", "19sp"),
        size_hint_y=None,
        height=kw.pop("height", "15mm"),
        background_normal="",
        background_color=kw.pop("bg", app.theme_button),
        color=app.theme_button_fg,
        halign=kw.pop("halign", "left"),
        valign="middle",
        **kw,
    )
    b.bind(size=lambda w, s: setattr(w, "text_size", (s[0] - dp(16), None)))
    b.bind(on_release=on_release)
    return b


def info_popup(title: str, lines: list[str]) -> Popup:
    """A readable popup with a Close button (used for recheck traces)."""
    body = BoxLayout(orientation="vertical", spacing=dp(8), padding=dp(8))
    scroll = ScrollView(do_scroll_x=False)
    text = Label(
        text="\n".join(lines), font_size="17sp", color=(1, 1, 1, 1), halign="left", valign="top", size_hint_y=None
    )
    text.bind(
        width=lambda w, v: setattr(w, "text_size", (v, None)), texture_size=lambda w, s: setattr(w, "height", s[1])
    )
    scroll.add_widget(text)
    body.add_widget(scroll)
    popup = Popup(title=title, content=body, size_hint=(0.9, 0.85), title_size="20sp")
    body.add_widget(big_button("Close", lambda *_: popup.dismiss(), halign="center"))
    popup.open()
    return popup


def choose_file(title: str, on_choice: Any, filters: list[str] | None = None) -> Popup:
    """A file chooser (desktop) with large Choose / Cancel buttons; on_choice(path) when chosen."""
    body = BoxLayout(orientation="vertical", spacing=dp(8), padding=dp(8))
    chooser = FileChooserListView(path=str(Path.home()), filters=filters or [], font_name=DEFAULT_FONT)
    body.add_widget(chooser)
    row = BoxLayout(size_hint_y=None, height="15mm", spacing=dp(8))
    popup = Popup(title=title, content=body, size_hint=(0.92, 0.92), title_size="20sp")

    def done(*_: Any) -> None:
        if chooser.selection:
            popup.dismiss()
            on_choice(chooser.selection[0])

    row.add_widget(big_button("Choose", done, halign="center"))
    row.add_widget(big_button("Cancel", lambda *_: popup.dismiss(), halign="center"))
    body.add_widget(row)
    popup.open()
    return popup


class TextField(BoxLayout):
    """Label, text input (with optional standard-size picks and keypad) and its message, bound to a name."""

    name = StringProperty("")
    label = StringProperty("")
    hint = StringProperty("")
    error = StringProperty("")
    quick = BooleanProperty(False)
    keypad = BooleanProperty(False)
    quick_values = ListProperty([])
    screen: Any = None
    loading = False

    def typed(self, text: str) -> None:
        """Text changed: save after a short pause (the screen debounces)."""
        if self.screen is not None and not self.loading:
            self.screen.typed(self.name, text)

    def commit(self) -> None:
        """Enter or leaving the field: save now."""
        if self.screen is not None and not self.loading:
            self.screen.commit(self.name)

    def pick_quick(self, text: str) -> None:
        """A standard size was picked."""
        if text and text != "std ▾" and not self.loading:
            self.ids.input.text = text
            self.commit()
            self.ids.quick.text = "std ▾"

    def open_keypad(self) -> None:
        """Large on-screen keypad for gloved hands (mm, m, feet-inches)."""
        grid = GridLayout(cols=4, spacing=dp(6), padding=dp(6))
        shown = Label(text=self.ids.input.text, font_size="28sp", size_hint_y=None, height="15mm")
        body = BoxLayout(orientation="vertical", spacing=dp(6))
        body.add_widget(shown)
        body.add_widget(grid)
        popup = Popup(title=self.label, content=body, size_hint=(0.6, 0.92), title_size="20sp")

        def press(key: str) -> None:
            if key == "OK":
                self.ids.input.text = shown.text
                popup.dismiss()
                self.commit()
                return
            shown.text = shown.text[:-1] if key == "⌫" else shown.text + (" " if key == "␣" else key)

        for key in KEYPAD_KEYS:
            grid.add_widget(Button(text=key, font_size="26sp", on_release=lambda _b, k=key: press(k)))
        popup.open()


class PickField(BoxLayout):
    """Label and a picker (spinner: tap, then tap a choice), bound to a name."""

    name = StringProperty("")
    label = StringProperty("")
    error = StringProperty("")
    values = ListProperty([])
    screen: Any = None
    loading = False

    def picked(self, text: str) -> None:
        """A choice was made: save it now."""
        if self.screen is not None and not self.loading:
            self.screen.set_now(self.name, text)


class SitesScreen(Screen):
    """Sites on this tablet with their sync state; create a site."""

    error_text = StringProperty("")

    def on_pre_enter(self, *args: Any) -> None:
        """Fill the site list."""
        app = App.get_running_app()
        self.vm = SitesViewModel(app.store)
        box = self.ids.site_list
        box.clear_widgets()
        for site_id, text in self.vm.rows():
            box.add_widget(big_button(text, lambda _b, sid=site_id: app.open_site(sid), height="22mm"))

    def create(self) -> None:
        """Create the site from the form and open it."""
        form = {
            k: self.ids[f"new_{k}"].text
            for k in (
                "name",
                "address",
                "permit_number",
                "project_number",
                "firm",
                "dead_kpa",
                "live_kpa",
                "snow_kpa",
                "use",
            )
        }
        site = self.vm.create(form)
        self.error_text = "\n".join(self.vm.errors.values())
        if site is not None:
            for k in form:
                if k != "use":
                    self.ids[f"new_{k}"].text = ""
            App.get_running_app().open_site(site.id)


class SiteScreen(Screen):
    """A site: beams by level and gridline with status words and shapes; deficiencies by priority."""

    title = StringProperty("")
    visit_text = StringProperty("")
    message = StringProperty("")

    def on_pre_enter(self, *args: Any) -> None:
        """Refresh from storage."""
        app = App.get_running_app()
        self.vm = SiteViewModel(app.store, app.site_id)
        site = app.store.site(app.site_id)
        self.title = f"{site.name}  ·  {site.address}"
        self.visit_text = self.vm.visit_line()
        box = self.ids.beam_list
        box.clear_widgets()
        for level, rows in self.vm.groups():
            box.add_widget(
                Label(
                    text=f"Level: {level}",
                    font_size="20sp",
                    bold=True,
                    color=app.theme_fg,
                    size_hint_y=None,
                    height=dp(40),
                    halign="left",
                    text_size=(None, None),
                )
            )
            for beam_id, name, status in rows:
                box.add_widget(
                    big_button(
                        f"{status}      {name}", lambda _b, bid=beam_id: app.open_beam(bid), bg=status_colour(status)
                    )
                )
        dbox = self.ids.deficiency_list
        dbox.clear_widgets()
        groups = self.vm.deficiency_groups()
        if not groups:
            dbox.add_widget(Label(text="None open.", color=app.theme_fg, size_hint_y=None, height=dp(40)))
        for label, rows in groups:
            dbox.add_widget(
                Label(text=label, font_size="18sp", bold=True, color=app.theme_fg, size_hint_y=None, height=dp(34))
            )
            for did, line in rows:
                dbox.add_widget(big_button(line, lambda _b, d=did: app.open_deficiency(d), font_size="16sp"))

    def new_beam(self) -> None:
        """Log a new beam and open its form."""
        App.get_running_app().open_beam(self.vm.new_beam())

    def start_visit(self) -> None:
        """Start a visit now."""
        if (
            self.vm.start_visit(
                self.ids.visit_reviewer.text,
                self.ids.visit_weather.text,
                self.ids.visit_scope.text,
                self.ids.visit_not_scope.text,
            )
            is None
        ):
            self.message = "\n".join(self.vm.errors.values())
            return
        self.message = ""
        self.visit_text = self.vm.visit_line()

    def raise_by_hand(self) -> None:
        """Raise the reviewer's own observation as a numbered deficiency."""
        number = self.vm.raise_by_hand(
            self.ids.hand_location.text,
            self.ids.hand_description.text,
            self.ids.hand_action.text,
            self.ids.hand_priority.text,
        )
        if number is None:
            self.message = "\n".join(self.vm.errors.values())
            return
        self.message = f"Raised {number}"
        for k in ("hand_location", "hand_description", "hand_action"):
            self.ids[k].text = ""
        self.on_pre_enter()


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
            w.error = self.vm.errors.get(name, "")
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
                    bg=_restraint_colour(state),
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
            self.vm.set_field(name, text)
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

    def after_change(self, reload: bool = False) -> None:
        """Show messages at the fields and refresh the recheck panel (and dependent pickers)."""
        if reload:
            self.load_form()
        else:
            values = self.vm.form()
            self.build_bearings(values)
        for name, w in self.fields.items():
            w.error = self.vm.errors.get(name, "")
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


STATUS_COLOURS = {
    "OK": (0.1, 0.4, 0.18, 1),
    "DEFICIENT": (0.62, 0.3, 0.0, 1),
    "NOT PERMITTED": (0.45, 0.05, 0.3, 1),
    "NOT ESTABLISHED": (0.7, 0.0, 0.0, 1),
    "NOT YET CHECKED": (0.35, 0.35, 0.38, 1),
}


def status_colour(label: str) -> tuple[float, float, float, float]:
    """Background for a status label (the label's word and shape carry the meaning; colour only helps)."""
    return next(
        (c for word, c in STATUS_COLOURS.items() if label.split(" ", 1)[1].startswith(word)),
        STATUS_COLOURS["NOT YET CHECKED"],
    )


def _restraint_colour(state: str) -> tuple[float, float, float, float]:
    return {"yes": (0.55, 0.85, 0.55, 1), "no": (0.75, 0.05, 0.05, 1), "not_visible": (1, 0.8, 0.3, 1)}[state]


class UtilBar(BoxLayout):
    """A utilisation bar with its number; 'OVER' in words as well as colour. ``show(util)`` updates it."""

    def __init__(self, **kwargs: Any):
        from kivy.graphics import Color, Line, Rectangle

        super().__init__(size_hint_y=None, height="6mm", **kwargs)
        self.bar = Label(font_size="15sp", bold=True, color=(0, 0, 0, 1))
        self.rest = Label()
        with self.bar.canvas.before:
            self.fill = Color(0.6, 0.82, 0.6, 1)
            self.rect = Rectangle()
            Color(0, 0, 0, 1)
            self.outline = Line(width=1)
        self.bar.bind(pos=self._place, size=self._place)
        self.add_widget(self.bar)
        self.add_widget(self.rest)

    def _place(self, w: Any, _v: Any) -> None:
        self.rect.pos, self.rect.size = w.pos, w.size
        self.outline.rectangle = (*w.pos, *w.size)

    def show(self, util: float) -> None:
        """Set the value: bar length min(util, 1) (at least a tenth, to hold the number)."""
        self.bar.text = f"{util:.2f}" + ("  OVER" if util > 1 else "")
        self.bar.size_hint_x = max(min(util, 1.0), 0.1)
        self.rest.size_hint_x = max(1.0 - max(util, 0.1), 0.0)
        self.fill.rgba = (0.95, 0.35, 0.25, 1) if util > 1 else (0.6, 0.82, 0.6, 1)


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


class NoticeScreen(Screen):
    """Choose the open items, preview the PDF pages, issue (then read-only), export."""

    message = StringProperty("")
    page_text = StringProperty("no preview yet")
    page_source = StringProperty("")

    def on_pre_enter(self, *args: Any) -> None:
        """Fill the item and issued lists."""
        app = App.get_running_app()
        self.vm = NoticeViewModel(app.store, app.site_id)
        self.pages: list[Path] = []
        self.page = 0
        self.page_source, self.page_text = "", "no preview yet"
        if not self.ids.export_dir.text:
            self.ids.export_dir.text = str(Path.home() / "bracewalk-exports")
        self.render()

    def render(self) -> None:
        """Items with their chosen state; issued notices with an Export button each."""
        box = self.ids.item_list
        box.clear_widgets()
        for did, line, chosen in self.vm.candidates():
            mark = "☑ " if chosen else "☐ "
            box.add_widget(big_button(mark + line, lambda _b, d=did: self.toggle(d), font_size="16sp"))
        issued = self.ids.issued
        issued.clear_widgets()
        for nid, line in self.vm.issued():
            issued.add_widget(big_button("Export  " + line, lambda _b, n=nid: self.export(n), font_size="15sp"))

    def toggle(self, deficiency_id: str) -> None:
        """Include or leave out one item."""
        self.vm.toggle(deficiency_id)
        self.render()

    def preview(self) -> None:
        """Render the draft notice and show its first page."""
        self.pages = self.vm.preview_pages(PREVIEW_DIR)
        self.page = 0
        self.show_page()

    def turn(self, step: int) -> None:
        """Next / previous page (buttons, no swipe needed)."""
        if self.pages:
            self.page = max(0, min(len(self.pages) - 1, self.page + step))
            self.show_page()

    def show_page(self) -> None:
        """Show the current page image."""
        self.page_source = str(self.pages[self.page])
        self.page_text = f"draft page {self.page + 1} of {len(self.pages)}"

    def issue(self) -> None:
        """Issue the chosen items."""
        out_dir = Path(App.get_running_app().store.path).parent / "notices"
        path = self.vm.issue(self.ids.issued_by.text, out_dir)
        self.message = self.vm.message
        if path is not None:
            self.pages = self.vm.preview_pages(PREVIEW_DIR, path.read_bytes())
            self.page = 0
            self.show_page()
            self.page_text = f"ISSUED page 1 of {len(self.pages)}"
            self.vm = NoticeViewModel(App.get_running_app().store, App.get_running_app().site_id)
        self.render()

    def export(self, notice_id: str) -> None:
        """Copy an issued notice's PDF into the export folder (to share)."""
        try:
            self.vm.export(notice_id, Path(self.ids.export_dir.text).expanduser())
        except (OSError, ValueError) as exc:
            self.message = f"Not exported: {exc}"
            return
        self.message = self.vm.message


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


class BracewalkApp(App):
    """The tablet app."""

    theme_bg = ListProperty(list(THEMES["sun"]["bg"]))
    theme_fg = ListProperty(list(THEMES["sun"]["fg"]))
    theme_button = ListProperty(list(THEMES["sun"]["button"]))
    theme_button_fg = ListProperty(list(THEMES["sun"]["button_fg"]))
    theme_input = ListProperty(list(THEMES["sun"]["input"]))
    theme_alert = ListProperty(list(THEMES["sun"]["alert"]))
    theme_band = ListProperty(list(THEMES["sun"]["band"]))
    caution = StringProperty(CAUTION)
    previous_screen = StringProperty("sites")

    def __init__(self, db: str | None = None, **kwargs: Any):
        super().__init__(**kwargs)
        self.db_path = Path(db) if db else default_db()
        self.site_id = ""
        self.beam_id = ""
        self.deficiency_id = ""

    def build(self) -> ScreenManager:
        """Open the store (loading the demo site into an empty database) and the screens."""
        self.title = "bracewalk"
        fresh = not self.db_path.exists()
        self.store = Store(self.db_path)
        if fresh or not self.store.sites():
            from mobile.demo.run import load_demo, raise_all

            raise_all(self.store, load_demo(self.store))
        Builder.load_file(str(KV / "common.kv"))
        for name in SCREENS:
            Builder.load_file(str(KV / f"{name}.kv"))
        sm = ScreenManager(transition=NoTransition())
        for cls, name in (
            (SitesScreen, "sites"),
            (SiteScreen, "site"),
            (BeamScreen, "beam"),
            (DeficiencyScreen, "deficiency"),
            (NoticeScreen, "notice"),
            (SyncScreen, "sync"),
        ):
            sm.add_widget(cls(name=name))
        return sm

    def on_pause(self) -> bool:
        """Android/iOS pause: pending typing is saved first."""
        if self.beam_id and hasattr(self.root.get_screen("beam"), "vm"):
            self.root.get_screen("beam").flush()
        return True

    def on_stop(self) -> None:
        """Save pending typing and close the database."""
        if self.beam_id and hasattr(self.root.get_screen("beam"), "vm"):
            self.root.get_screen("beam").flush()
        self.store.close()

    def set_theme(self, name: str) -> None:
        """Switch between the sunlight and the dim theme."""
        for key, value in THEMES[name].items():
            setattr(self, f"theme_{key}", list(value))
        if self.root is not None:
            current = self.root.current_screen
            current.on_pre_enter()

    def go(self, name: str) -> None:
        """Show a screen."""
        if name == "sync":
            self.previous_screen = self.root.current if self.root.current != "sync" else "sites"
        self.root.current = name

    def open_site(self, site_id: str) -> None:
        """Open a site."""
        self.site_id = site_id
        self.go("site")

    def open_beam(self, beam_id: str) -> None:
        """Open a beam's form."""
        self.beam_id = beam_id
        self.go("beam")

    def open_deficiency(self, deficiency_id: str) -> None:
        """Open a deficiency."""
        self.deficiency_id = deficiency_id
        self.go("deficiency")


def run_app(db: str | None = None) -> int:
    """Run the app until closed."""
    BracewalkApp(db).run()
    return 0
