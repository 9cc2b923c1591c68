"""Shared widgets of the tablet screens (their kv rules are in widgets.kv beside this module)."""

from __future__ import annotations

import fnmatch
import re
from pathlib import Path
from typing import Any

from kivy.app import App
from kivy.clock import Clock
from kivy.metrics import dp, mm
from kivy.properties import BooleanProperty, ListProperty, NumericProperty, StringProperty
from kivy.uix.boxlayout import BoxLayout
from kivy.uix.button import Button
from kivy.uix.gridlayout import GridLayout
from kivy.uix.label import Label
from kivy.uix.popup import Popup
from kivy.uix.scrollview import ScrollView
from kivy.uix.textinput import TextInput

from core.results import Status, utilisation_text
from mobile.units import parse_length_mm

# a text field's value is at least this wide (mm) beside its name, else the name goes above it: a length as the
# form shows it ("388.938 mm", six digits and the unit) takes 36 mm in the fields' 22sp type at density 1.5 and
# 149 dpi (and at 3 and 300 dpi), plus the field's padding
INPUT_MIN_MM = 42
SPANS_MIN_MM = 80  # two spans as shown, "4427.54 mm; 3744.91 mm", in the same type (75 mm at 149 dpi)
# ';' (next span) sits in the top row, far from OK; no ',' (the decimal point is '.'); C clears. Four columns
# when the window is taller than wide; five in landscape, where five rows of keys left each 13.2 mm high
KEYPAD_KEYS = ("7", "8", "9", ";", "4", "5", "6", "C", "1", "2", "3", "'", "0", ".", "/", '"', "␣", "m", "mm", "⌫")
KEYPAD_KEYS_WIDE = ("7", "8", "9", ";", "C", "4", "5", "6", "'", "⌫", "1", "2", "3", '"', "m", "0", ".", "/", "␣", "mm")
KEEP = "\u00a0"  # a no-break space: the keypad's entry breaks its lines between spans only ("7200 mm;" whole)


def big_button(text: str, on_release: Any, **kw: Any) -> Button:
    """A 15 mm button in the theme's colours (for rows built in Python).

    ``grow=True``: at least 15 mm, taller when its text needs more lines (a button alone in a vertical list,
    never in a fixed-height row).
    """
    app = App.get_running_app()
    grow = kw.pop("grow", False)
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
    if grow:
        least = b.height
        b.bind(texture_size=lambda w, ts: setattr(w, "height", max(least, ts[1] + dp(12))))
    b.bind(on_release=on_release)
    return b


def done_look(button: Button) -> None:
    """Show a button as done (disabled) and still readable in sunlight: the theme's text on its input colour.

    Kivy draws a disabled button on a grey image with its text at 30 % alpha (light grey on grey, the
    raised-finding buttons' deficiency numbers unreadable outdoors); its words say it is done ('✔ ... raised').
    """
    app = App.get_running_app()
    button.disabled = True
    button.background_disabled_normal = ""
    button.background_color = app.theme_input
    button.disabled_color = app.theme_fg


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
    """Pick a file with gloves: 15 mm rows, a folder opens on one tap, a file is chosen on one tap."""
    patterns = [f.lower() for f in (filters or ["*"])]
    body = BoxLayout(orientation="vertical", spacing=dp(8), padding=dp(8))
    where = Label(font_size="17sp", size_hint_y=None, height="11mm", halign="left", valign="middle", shorten=True)
    where.bind(size=lambda w, s: setattr(w, "text_size", s))
    rows = BoxLayout(orientation="vertical", spacing=dp(6), size_hint_y=None)
    rows.bind(minimum_height=rows.setter("height"))
    scroll = ScrollView(do_scroll_x=False)
    scroll.add_widget(rows)
    body.add_widget(where)
    body.add_widget(scroll)
    popup = Popup(title=title, content=body, size_hint=(0.92, 0.92), title_size="20sp")

    def show(folder: Path) -> None:
        where.text = str(folder)
        rows.clear_widgets()
        if folder.parent != folder:
            rows.add_widget(big_button("⬆  Up one folder", lambda *_: show(folder.parent)))
        try:
            entries = sorted(folder.iterdir(), key=lambda e: (not e.is_dir(), e.name.lower()))
        except OSError as exc:
            rows.add_widget(big_button(f"Cannot open this folder: {exc.strerror}", lambda *_: None))
            return
        for e in entries:
            if e.name.startswith("."):
                continue
            if e.is_dir():
                rows.add_widget(big_button(f"▸  {e.name}", lambda _b, d=e: show(d)))
            elif any(fnmatch.fnmatch(e.name.lower(), pat) for pat in patterns):
                rows.add_widget(big_button(e.name, lambda _b, f=e: (popup.dismiss(), on_choice(str(f)))))
        scroll.scroll_y = 1

    body.add_widget(big_button("Cancel", lambda *_: popup.dismiss(), halign="center"))
    show(Path.home())
    popup.open()
    return popup


class FoldBand(Button):
    """A band shown short (folded) or whole; a tap switches, so the whole text is always one tap away.

    Empty ``full`` hides it (0 high, transparent, disabled). The kv rule (widgets.kv) sizes it to its text.
    """

    short = StringProperty("")
    full = StringProperty("")
    folded = BooleanProperty(True)

    def on_release(self) -> None:
        """A tap: the whole text, or back to the short form."""
        self.folded = not self.folded


class TextField(BoxLayout):
    """Label, text input (with optional standard-size picks and keypad) and its message, bound to a name."""

    name = StringProperty("")
    label = StringProperty("")
    hint = StringProperty("")
    error = StringProperty("")
    echo = StringProperty("")  # what the stored value was understood as ('= 7200 mm = 23' 7 7/16"')
    suggestion = StringProperty("")  # a value to offer when the entry was refused ('3.9 m')
    quick = BooleanProperty(False)
    keypad = BooleanProperty(False)
    least_mm = NumericProperty(INPUT_MIN_MM)  # the narrowest the value may be beside its name, else it goes under
    stacked = BooleanProperty(False)  # its name above the field (set by the kv rule from the width)
    wraps = BooleanProperty(False)  # the value wraps between spans and the field grows to show it (the spans)
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

    def accept_suggestion(self) -> None:
        """The reviewer took the offered reading ('3.9 m'): enter it as if typed."""
        if self.suggestion and not self.loading:
            self.ids.input.text = self.suggestion
            self.commit()

    def quick_opened(self, spinner: Any) -> None:
        """The standard sizes opened: show the one nearest the field's value (not the top of a long list)."""
        try:
            current = parse_length_mm(self.ids.input.text)
        except ValueError:
            return
        options = [w for w in spinner._dropdown.container.children if getattr(w, "text", "")]
        if not options:
            return
        near = min(options, key=lambda w: abs(float(w.text) - current) if w.text.replace(".", "").isdigit() else 1e9)
        self.quick_near = near.text
        Clock.schedule_once(lambda _dt: spinner._dropdown.scroll_to(near, animate=False))

    def pick_quick(self, text: str) -> None:
        """A standard size was picked."""
        if text and text != "std ▾" and not self.loading:
            self.ids.input.text = text
            self.commit()
            self.ids.quick.text = "std ▾"

    def open_keypad(self) -> Popup:
        """Large on-screen keypad for gloved hands (mm, m, feet-inches).

        It opens with the field's text and a clear key; OK enters it; dismissing it any other way
        (Cancel keeps the field as it was, a tap outside keeps what was typed and enters it). The entry above
        the keys wraps between spans ("7200 mm; 7200 mm;" over "6000 mm; 4800 mm"), never inside one. Every key
        is at least 15 mm both ways: five columns in landscape, four in portrait.
        """
        from kivy.core.window import Window

        wide = Window.width > Window.height
        grid = GridLayout(cols=5 if wide else 4, spacing=dp(6), padding=dp(6))
        shown = Label(font_size="28sp", size_hint_y=None, height="15mm", halign="center", valign="middle")
        shown.bind(width=lambda w, width: setattr(w, "text_size", (width, None)))
        shown.bind(texture_size=lambda w, ts: setattr(w, "height", max(mm(15), ts[1] + dp(8))))
        body = BoxLayout(orientation="vertical", spacing=dp(6))
        body.add_widget(shown)
        body.add_widget(grid)
        popup = Popup(title=self.label, content=body, size_hint=(0.7 if wide else 0.6, 0.96), title_size="20sp")
        state = {"done": False, "text": self.ids.input.text}

        def show(text: str) -> None:
            state["text"] = text
            shown.text = re.sub(r"(;) *", r"\1 ", text).replace(" ", KEEP).replace(";" + KEEP, "; ")

        def enter(*_: Any) -> None:
            if not state["done"]:
                state["done"] = True
                if state["text"] != self.ids.input.text:
                    self.ids.input.text = state["text"]
                self.commit()

        def press(key: str) -> None:
            if key == "C":
                show("")
            elif key == "⌫":
                show(state["text"][:-1])
            else:
                show(state["text"] + (" " if key == "␣" else key))

        def cancel(*_: Any) -> None:
            state["done"] = True
            popup.dismiss()

        show(state["text"])
        for key in KEYPAD_KEYS_WIDE if wide else KEYPAD_KEYS:
            grid.add_widget(Button(text=key, font_size="26sp", on_release=lambda _b, k=key: press(k)))
        row = BoxLayout(size_hint_y=None, height="15mm", spacing=dp(12))
        row.add_widget(big_button("Cancel", cancel, halign="center", size_hint_x=0.4))
        row.add_widget(big_button("OK", lambda *_: popup.dismiss(), halign="center"))
        body.add_widget(row)
        popup.bind(on_dismiss=enter)  # OK, or a tap outside: what was typed is kept and entered
        self.keypad_popup, self.keypad_shown = popup, shown
        popup.open()
        return popup


ENTER_KEYS = (13, 271)  # Enter and the keypad's Enter


class WrappingInput(TextInput):
    """A text field that wraps its text (or its hint) over as many lines as it needs and grows to show it all.

    Its kv rule is in widgets.kv. For the words that go to the contractor (where, what was found, what to do):
    a one-line field showed about 20 characters of them. The text stays one paragraph, as in a one-line field:
    Enter leaves the field (which saves it) and a pasted line break becomes a space. Lines break at spaces
    only: Kivy's text field also breaks after '.', ',' and ':', which split 'utilisation 1.66' into '1.' and '66'
    and a clause number '7.5.6.5.1' across two lines.
    """

    _tokenize_delimiters = " \r\t"  # TextInput's word boundaries for wrapping (its own: " .,:;!?\r\t")

    def keyboard_on_key_down(self, window: Any, keycode: tuple[int, str], text: str, modifiers: list[str]) -> bool:
        """Enter validates and leaves the field, as in a one-line field; every other key as usual."""
        if keycode[0] in ENTER_KEYS:
            self.dispatch("on_text_validate")
            if self.text_validate_unfocus:
                self.focus = False
            return True
        return bool(super().keyboard_on_key_down(window, keycode, text, modifiers))

    def insert_text(self, substring: str, from_undo: bool = False) -> None:
        """Insert typed or pasted text, a line break in it as a space."""
        super().insert_text(substring.replace("\r\n", " ").replace("\n", " "), from_undo=from_undo)


class LengthInput(WrappingInput):
    """A beam form field's value (its kv rule is in widgets.kv): one line, or, for the spans, wrapped between spans.

    ``multiline`` is the field's ``wraps``: the spans field grows a line at a time and breaks a line only after
    a ';' ("7200 mm; 7200 mm;" over "6000 mm; 4800 mm"), never between a number and its unit. One line, four
    spans ran 695 px of text into a field 470 px wide (1280x800 at 149 dpi, density 1.5), showing their end only.
    """

    _SPAN = re.compile(r"[^;\n]*;[ \t]*|[^;\n]+|\n")  # a span with its ';' and the spaces after it; a line break

    def _tokenize(self, text: str | None) -> Any:
        """The pieces a line may break between: whole spans (TextInput's own also break after '.', ',', ' ')."""
        if text is None:
            return
        yield from (m.group() for m in self._SPAN.finditer(text))
        if not text:
            yield ""


class NoteField(TextField):
    """A text field of free text (a beam's notes): its name above it, its text wrapped whole (``WrappingInput``).

    Its kv rule (widgets.kv) replaces TextField's: no keypad or standard sizes. A one-line field showed a long
    note's last words only, scrolled sideways (a 2,000-character note drew 32,000 px in a 323 px field).
    """


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


RGBA = tuple[float, float, float, float]
UNCHECKED = "unchecked"  # a beam the recheck cannot run on yet (the view models' word for it)
STATUS_COLOURS: dict[str, RGBA] = {  # keyed by the status enum's values: never by the label's wording
    Status.ok: (0.1, 0.4, 0.18, 1),
    Status.deficient: (0.62, 0.3, 0.0, 1),
    Status.not_permitted: (0.45, 0.05, 0.3, 1),
    Status.not_established: (0.7, 0.0, 0.0, 1),
    UNCHECKED: (0.35, 0.35, 0.38, 1),
}


def status_colour(status: Status | str) -> RGBA:
    """Background for a recheck status (core ``Status``, or "unchecked"); its word and shape carry the meaning."""
    if status not in STATUS_COLOURS:
        msg = f"status {status!r}; allowed: {', '.join(STATUS_COLOURS)}"
        raise ValueError(msg)
    return STATUS_COLOURS[status]


def restraint_colour(state: str) -> tuple[float, float, float, float]:
    """Background of a restraint button: yes / no / not visible (the button's words carry the meaning)."""
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
        self.bar.text = utilisation_text(util) + ("  OVER" if util > 1 else "")
        self.bar.size_hint_x = max(min(util, 1.0), 0.1)
        self.rest.size_hint_x = max(1.0 - max(util, 0.1), 0.0)
        self.fill.rgba = (0.95, 0.35, 0.25, 1) if util > 1 else (0.6, 0.82, 0.6, 1)
