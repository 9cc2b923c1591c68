"""The Kivy tablet app: thin screens over the plain-Python view models (mobile/viewmodels/).

Screens (mobile/screens/: one module and one .kv file each): sites, site, beam, deficiency, notice,
sync, reviewer, photo; shared widgets in mobile/screens/widgets.py. This module keeps the App: theme, store,
navigation. Every field is saved as it is entered (debounced while typing, at once on Enter or
leaving the field), so a killed app loses nothing typed. Long work (sync) runs in a worker thread
with its own database connection, as does the site screen's recheck of many stale results; a beam's
live recheck (a few milliseconds) runs on the UI thread.
"""

from __future__ import annotations

import gc
import os
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
from kivy.lang import Builder  # noqa: E402
from kivy.properties import ListProperty, StringProperty  # noqa: E402
from kivy.uix.screenmanager import NoTransition, ScreenManager  # noqa: E402

from mobile.screens.beam import BeamScreen  # noqa: E402
from mobile.screens.deficiency import DeficiencyScreen  # noqa: E402
from mobile.screens.notice import NoticeScreen  # noqa: E402
from mobile.screens.photo import PhotoScreen  # noqa: E402
from mobile.screens.reviewer import ReviewerScreen  # noqa: E402
from mobile.screens.site import SiteScreen  # noqa: E402
from mobile.screens.sites import SitesScreen  # noqa: E402
from mobile.screens.sync import SyncScreen  # noqa: E402
from mobile.viewmodels.common import APP_CAUTION  # noqa: E402
from mobile.viewmodels.sync import AutoSync, BackgroundSync, SyncViewModel  # noqa: E402
from storage import Store  # noqa: E402

KV = Path(__file__).with_name("screens")
AUTO_SYNC_POLL_S = 1.0  # how often the app looks whether a background sync is due (a cheap count)
SCREENS = ("sites", "site", "beam", "deficiency", "notice", "sync", "reviewer", "photo")
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


def default_db() -> Path:
    """The per-user database (created with the demo site on first run)."""
    base = Path(os.environ.get("BRACEWALK_HOME", Path.home() / ".bracewalk"))
    base.mkdir(parents=True, exist_ok=True)
    return base / "bracewalk.db"


class BracewalkApp(App):
    """The tablet app."""

    theme_bg = ListProperty(list(THEMES["sun"]["bg"]))
    theme_fg = ListProperty(list(THEMES["sun"]["fg"]))
    theme_button = ListProperty(list(THEMES["sun"]["button"]))
    theme_button_fg = ListProperty(list(THEMES["sun"]["button_fg"]))
    theme_input = ListProperty(list(THEMES["sun"]["input"]))
    theme_alert = ListProperty(list(THEMES["sun"]["alert"]))
    theme_band = ListProperty(list(THEMES["sun"]["band"]))
    caution = StringProperty(APP_CAUTION)
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
        Builder.load_file(str(KV / "widgets.kv"))
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
            (ReviewerScreen, "reviewer"),
            (PhotoScreen, "photo"),
        ):
            sm.add_widget(cls(name=name))
        # automatic sync with the office hub: a worker thread, started when due; the form never waits for it
        self.background = BackgroundSync(AutoSync(SyncViewModel(self.store)))
        self._auto_sync_timer = Clock.schedule_interval(self._auto_sync, AUTO_SYNC_POLL_S)
        return sm

    def on_start(self) -> None:
        """Freeze the start-up heap once the first frame is on screen (``freeze_start_heap``)."""
        from kivy.core.window import Window

        Window.bind(on_flip=self._first_frame)

    def _first_frame(self, *_: Any) -> None:
        from kivy.core.window import Window

        Window.unbind(on_flip=self._first_frame)
        freeze_start_heap()

    def _auto_sync(self, _dt: float) -> None:
        """Timer: let the background sync start or collect its work (never waits on the network).

        When a sync has just finished, the screen shown follows it: the sync screen's progress, the site
        screen's beams (a pulled edit changes their results).
        """
        if not self.background.poll(time.monotonic()):
            return
        if self.root.current == "sync":
            self.root.get_screen("sync").follow()
        elif self.root.current == "site":
            self.root.get_screen("site").after_sync()

    def on_pause(self) -> bool:
        """Android/iOS pause: pending typing is saved first."""
        if self.beam_id and hasattr(self.root.get_screen("beam"), "vm"):
            self.root.get_screen("beam").flush()
        return True

    def on_stop(self) -> None:
        """Save pending typing, let a sync under way finish (bounded) and close the database."""
        if self.beam_id and hasattr(self.root.get_screen("beam"), "vm"):
            self.root.get_screen("beam").flush()
        self._auto_sync_timer.cancel()
        self.background.stop()
        self.root.get_screen("site").stop_recheck()
        self.store.close()
        from kivy.core.window import Window

        Window.unbind(on_flip=self._first_frame)  # stopped before its first frame: nothing to freeze
        gc.unfreeze()  # the start-up heap goes back to the collector (freeze_start_heap)

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


def freeze_start_heap() -> None:
    """Collect once, then move every object still alive into the collector's permanent generation.

    What stays frozen: the objects alive just after the app's first frame: imported modules and
    classes, the kv rules, the screens and their widgets, the store. They live as long as the app, yet
    every full collection walked all of them (about 400,000 objects: 120-290 ms here, which fell in the
    middle of opening a 10,000-beam site); frozen, a full collection walks only what came after.
    Why it cannot grow: it runs once per app run, after a full collection (no garbage is frozen), and
    everything made later is collected as before. An object frozen here that later becomes cyclic
    garbage (a widget of the first screen's list, rebuilt) is held until ``on_stop`` unfreezes the
    heap: at most the start-up heap, never more.
    """
    gc.collect()
    gc.freeze()


def run_app(db: str | None = None) -> int:
    """Run the app until closed."""
    BracewalkApp(db).run()
    return 0
