"""The Kivy tablet app: thin screens over the plain-Python view models (mobile/viewmodels.py)."""

from __future__ import annotations

import os
import time
from pathlib import Path
from typing import Any

from kivy.config import Config

Config.set("graphics", "width", "1280")  # 10-inch tablet, landscape
Config.set("graphics", "height", "800")
Config.set("kivy", "exit_on_escape", "0")

from kivy.app import App  # noqa: E402
from kivy.core.text import DEFAULT_FONT, LabelBase  # noqa: E402
from kivy.lang import Builder  # noqa: E402
from kivy.metrics import dp  # noqa: E402
from kivy.properties import ListProperty, StringProperty  # noqa: E402
from kivy.uix.boxlayout import BoxLayout  # noqa: E402
from kivy.uix.button import Button  # noqa: E402
from kivy.uix.label import Label  # noqa: E402
from kivy.uix.screenmanager import Screen, ScreenManager  # noqa: E402

from core.results import CAUTION  # noqa: E402
from mobile.viewmodels import BeamFormViewModel, SiteViewModel  # noqa: E402
from storage import Store  # noqa: E402

KV = Path(__file__).with_name("kv")
_FONTS = Path(__file__).resolve().parents[1] / "reports" / "fonts"
# DejaVu Sans covers the status shapes and symbols (phi, <=) that Kivy's default font lacks
LabelBase.register(DEFAULT_FONT, str(_FONTS / "DejaVuSans.ttf"), fn_bold=str(_FONTS / "DejaVuSans-Bold.ttf"))
THEMES = {"sun": ((1, 1, 1, 1), (0, 0, 0, 1)), "dim": ((0.08, 0.08, 0.1, 1), (0.85, 0.85, 0.8, 1))}
NEXT_RESTRAINT = {"yes": "no", "no": "not_visible", "not_visible": "yes"}


def default_db() -> Path:
    """The per-user database (created with the demo site on first run)."""
    base = Path(os.environ.get("BRACEWALK_HOME", Path.home() / ".bracewalk"))
    base.mkdir(parents=True, exist_ok=True)
    return base / "bracewalk.db"


class SitesScreen(Screen):
    """List of sites; tap to open."""

    def on_pre_enter(self, *args: Any) -> None:
        """Fill the site list."""
        app = App.get_running_app()
        box = self.ids.site_list
        box.clear_widgets()
        for site in app.store.sites():
            pending = app.store.pending_sync_count()
            b = Button(text=f"{site.name}   ({pending} changes not yet synced)", font_size="22sp",
                       size_hint_y=None, height=dp(72))
            b.bind(on_release=lambda _b, sid=site.id: app.open_site(sid))
            box.add_widget(b)
        box.add_widget(Label())


class SiteScreen(Screen):
    """A site: beams by level with status words and shapes; open deficiencies; issue a notice."""

    title = StringProperty("")
    deficiency_text = StringProperty("")
    issued_text = StringProperty("")

    def on_pre_enter(self, *args: Any) -> None:
        """Refresh from storage."""
        app = App.get_running_app()
        vm = SiteViewModel(app.store, app.site_id)
        self.title = app.store.site(app.site_id).name
        lines = vm.open_deficiencies()
        self.deficiency_text = "Open deficiencies: " + (f"{len(lines)}\n" + "\n".join(lines[:4]) if lines else "none")
        box = self.ids.beam_list
        box.clear_widgets()
        for level, rows in vm.groups():
            box.add_widget(Label(text=f"Level {level}", font_size="20sp", bold=True, color=app.theme_fg,
                                 size_hint_y=None, height=dp(40)))
            for beam_id, name, status in rows:
                b = Button(text=f"{name}      {status}", font_size="20sp", size_hint_y=None, height=dp(64))
                b.bind(on_release=lambda _b, bid=beam_id: app.open_beam(bid))
                box.add_widget(b)

    def issue(self) -> None:
        """Issue a notice PDF for the open deficiencies (then it is read-only)."""
        from mobile.issue import issue_notice_for_site

        app = App.get_running_app()
        out = Path(app.store.path).parent / "notices" / f"notice-{int(time.time())}.pdf"
        notice, path = issue_notice_for_site(app.store, app.site_id, out, issued_by="Reviewer")
        self.issued_text = f"Issued {notice.number} ({len(notice.deficiency_ids)} items): {path.name}"


class BeamScreen(Screen):
    """Log / edit a beam with the live recheck beside the form."""

    title = StringProperty("")
    immediate_text = StringProperty("")
    error_text = StringProperty("")
    lines = ListProperty([])

    def on_pre_enter(self, *args: Any) -> None:
        """Load the beam into the form."""
        app = App.get_running_app()
        self.vm = BeamFormViewModel(app.store, app.site_id, app.beam_id)
        rec = self.vm.record()
        self.title = f"{rec['mark']}  ·  {rec.get('level', '')} {rec.get('gridline', '')}"
        self.ids.b_mm.text = f"{rec['b_mm']:g}"
        self.ids.d_mm.text = f"{rec['d_mm']:g}"
        self.ids.span_mm.text = f"{rec['spans_mm'][0]:g}"
        self.ids.purlin_spacing_mm.text = f"{rec.get('top_edge', {}).get('spacing_mm') or ''}"
        self.render()

    def field(self, name: str, text: str) -> None:
        """A field was entered: autosave, recheck, show any message at the field."""
        self.vm.set_field(name, text)
        self.render()

    def cycle_restraint(self, support: int, key: str) -> None:
        """Large toggle: yes -> no -> not visible -> yes."""
        current = self.vm.record()["bearings"][support - 1][key]
        self.vm.set_field(f"bearing{support}.{key}", NEXT_RESTRAINT[current])
        self.render()

    def undo(self) -> None:
        """Undo the last change."""
        self.vm.undo()
        self.on_pre_enter()

    def raise_first(self) -> None:
        """Raise a deficiency from the first finding."""
        r = self.vm.result or self.vm.refresh()
        if r.findings:
            self.error_text = f"Raised {self.vm.raise_deficiency(0)}"

    def leave(self) -> None:
        """Back to the site."""
        App.get_running_app().go("site")

    def render(self) -> None:
        """Redraw the recheck panel and restraint toggles."""
        app = App.get_running_app()
        rec = self.vm.record()
        for i in (1, 2):
            if i <= len(rec["bearings"]):
                state = rec["bearings"][i - 1]["rotation"]
                self.ids[f"bearing{i}_rotation"].text = {"yes": "YES restrained", "no": "NO restraint",
                                                         "not_visible": "NOT VISIBLE"}[state]
        self.error_text = "\n".join(f"{k}: {v}" for k, v in self.vm.errors.items())
        self.immediate_text = "\n".join("IMMEDIATE: " + x for x in self.vm.immediate_findings())
        panel = self.ids.panel
        panel.clear_widgets()
        for text, util in self.vm.panel_lines():
            row = BoxLayout(orientation="vertical", size_hint_y=None, height=dp(58))
            label = Label(text=text, font_size="16sp", color=app.theme_fg, halign="left", valign="middle")
            label.bind(size=lambda w, s: setattr(w, "text_size", s))
            row.add_widget(label)
            if util is not None:
                bar = Label(text=f"{util:.2f}" + ("  OVER" if util > 1 else ""), font_size="15sp", bold=True,
                            color=(0, 0, 0, 1), size_hint=(max(min(util, 1.0), 0.08), None), height=dp(22))
                with bar.canvas.before:
                    from kivy.graphics import Color, Rectangle

                    Color(*((1, 0.4, 0.3, 1) if util > 1 else (0.55, 0.8, 0.55, 1)))
                    bar._rect = Rectangle(pos=bar.pos, size=bar.size)
                bar.bind(pos=lambda w, p: setattr(w._rect, "pos", p), size=lambda w, s: setattr(w._rect, "size", s))
                row.add_widget(bar)
            panel.add_widget(row)
        panel.add_widget(Label())


class BracewalkApp(App):
    """The tablet app."""

    theme_bg = ListProperty(list(THEMES["sun"][0]))
    theme_fg = ListProperty(list(THEMES["sun"][1]))
    caution = StringProperty(CAUTION)

    def __init__(self, db: str | None = None, **kwargs: Any):
        super().__init__(**kwargs)
        self.db_path = Path(db) if db else default_db()
        self.site_id = ""
        self.beam_id = ""

    def build(self) -> ScreenManager:
        """Open the store (loading the demo site into an empty database) and the screens."""
        self.title = "bracewalk"
        fresh = not self.db_path.exists()
        self.store = Store(self.db_path)
        if fresh or not self.store.sites():
            from mobile.demo.run import load_demo, raise_all

            raise_all(self.store, load_demo(self.store))
        for name in ("sites", "site", "beam"):
            Builder.load_file(str(KV / f"{name}.kv"))
        sm = ScreenManager()
        sm.add_widget(SitesScreen(name="sites"))
        sm.add_widget(SiteScreen(name="site"))
        sm.add_widget(BeamScreen(name="beam"))
        return sm

    def set_theme(self, name: str) -> None:
        """Switch between the sunlight and the dim theme."""
        self.theme_bg, self.theme_fg = list(THEMES[name][0]), list(THEMES[name][1])

    def go(self, name: str) -> None:
        """Show a screen."""
        self.root.current = name

    def open_site(self, site_id: str) -> None:
        """Open a site."""
        self.site_id = site_id
        self.go("site")

    def open_beam(self, beam_id: str) -> None:
        """Open a beam's form."""
        self.beam_id = beam_id
        self.go("beam")


def run_app(db: str | None = None) -> int:
    """Run the app until closed."""
    BracewalkApp(db).run()
    return 0
