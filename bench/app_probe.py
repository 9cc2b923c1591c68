"""Child process of bench/app.py: start an app under the bench's X display and report timings as JSON.

usage: python -m bench.app_probe bare|app|site|stale DB
bare: a one-label Kivy app (the baseline); app: bracewalk on DB, then field changes on a beam form;
site: bracewalk on DB, then its first site opened (tap to the first frame showing the list's rows), with
the process's own peak memory (VmHWM) after.
Prints one line: BENCH {"first_frame_wall": ..., "refresh_ms": [...], "recheck_ms": [...]}
(site: {"first_frame_wall": ..., "site_open_s": ..., "beams_shown": ..., "window": [w, h], "gc_ms": [gen 0, 1, 2],
"gc_full": ..., "peak_mb": ...}: the window's size in pixels, the time spent in the cyclic collector per
generation and the number of full collections, all from the tap to the rows on screen).
stale: as site, on a site whose every result is stale (the app rechecks it in a worker thread): the tap to the
rows on screen once the recheck is done ("site_open_s"), the tap to the first frame ("first_frame_s") and the
longest gap between two UI ticks after that first frame ("longest_pause_s"), a Clock callback every frame.
`mobile.app` is imported before Kivy's window: it sets the app's window size (1280x800, a 10-inch
tablet in landscape), which the window takes when it opens; opened first, it was Kivy's 800x600.
"""

from __future__ import annotations

import itertools
import json
import sys
import time

MODE, DB = sys.argv[1], sys.argv[2]
out: dict[str, object] = {}


def finish(app: object) -> None:
    print("BENCH " + json.dumps(out), flush=True)
    app.stop()  # type: ignore[attr-defined]


def on_first_frame(then: object) -> None:
    from kivy.core.window import Window

    def flipped(*_: object) -> None:
        Window.unbind(on_flip=flipped)
        out["first_frame_wall"] = time.time()
        from kivy.clock import Clock

        Clock.schedule_once(lambda _dt: then(), 0.2)  # type: ignore[operator]

    Window.bind(on_flip=flipped)


if MODE == "bare":
    from kivy.app import App
    from kivy.uix.label import Label

    class Bare(App):
        """The baseline: a one-label Kivy app."""

        def build(self) -> Label:
            """One label."""
            return Label(text="baseline")

        def on_start(self) -> None:
            """Report the first frame, then stop."""
            on_first_frame(lambda: finish(self))

    Bare().run()
elif MODE == "stale":
    from mobile.app import BracewalkApp  # first: it sets the app's window size before the window opens

    from kivy.clock import Clock  # isort: skip
    from kivy.core.window import Window  # isort: skip

    app = BracewalkApp(DB)

    def open_stale() -> None:
        ticks: list[float] = []
        flips: list[float] = []
        t0 = time.perf_counter()

        def tick(_dt: float) -> None:
            ticks.append(time.perf_counter())
            screen = app.root.get_screen("site")
            if screen._loading or screen._recheck is not None or not screen.ids.beam_list.layout_manager.children:
                return
            tick_event.cancel()
            Window.unbind(on_flip=flipped)
            out["site_open_s"] = ticks[-1] - t0
            first = flips[0] if flips else ticks[-1]
            out["first_frame_s"] = first - t0
            after = [t for t in ticks if t >= first]
            out["longest_pause_s"] = max((b - a for a, b in itertools.pairwise(after)), default=0.0)
            Clock.schedule_once(lambda _dt: finish(app), 0.3)

        def flipped(*_: object) -> None:
            flips.append(time.perf_counter())

        Window.bind(on_flip=flipped)
        tick_event = Clock.schedule_interval(tick, 0)
        app.open_site(app.store.sites()[0].id)

    app.bind(on_start=lambda *_: on_first_frame(open_stale))
    app.run()
elif MODE == "site":
    import gc

    from mobile.app import BracewalkApp  # first: it sets the app's window size before the window opens

    from kivy.clock import Clock  # isort: skip
    from kivy.core.window import Window  # isort: skip

    from bench.common import own_peak_mb

    app = BracewalkApp(DB)
    collections: list[tuple[int, float]] = []  # (generation, seconds) of each collection during the open

    def on_gc(phase: str, info: dict[str, int]) -> None:
        if phase == "start":
            collections.append((info["generation"], time.perf_counter()))
        else:
            gen, began = collections[-1]
            collections[-1] = (gen, time.perf_counter() - began)

    def open_site() -> None:
        t0 = time.perf_counter()
        gc.callbacks.append(on_gc)

        def flipped(*_: object) -> None:
            layout = app.root.get_screen("site").ids.beam_list.layout_manager
            if not layout.children:  # the recycling list has not laid out its visible rows yet
                return
            Window.unbind(on_flip=flipped)
            out["site_open_s"] = time.perf_counter() - t0
            gc.callbacks.remove(on_gc)
            out["beams_shown"] = len(layout.children)
            out["window"] = list(Window.size)
            out["gc_ms"] = [round(1000 * sum(s for g, s in collections if g == gen), 1) for gen in (0, 1, 2)]
            out["gc_full"] = sum(1 for g, _ in collections if g == 2)
            Clock.schedule_once(lambda _dt: done(), 0.3)

        def done() -> None:
            out["peak_mb"] = own_peak_mb()
            finish(app)

        Window.bind(on_flip=flipped)
        app.open_site(app.store.sites()[0].id)

    app.bind(on_start=lambda *_: on_first_frame(open_site))
    app.run()
else:
    from mobile.app import BracewalkApp  # first: it sets the app's window size before the window opens

    from kivy.clock import Clock  # isort: skip
    from kivy.core.window import Window  # isort: skip

    from core.recheck import recheck

    app = BracewalkApp(DB)
    spacings = ["1200", "1800", "2400", "3000", "1500", "2100", "2700", "1300"] * 3
    samples: list[float] = []
    rechecks: list[float] = []
    sync_ms: list[float] = []
    render_ms: list[float] = []

    def change(i: int) -> None:
        screen = app.root.get_screen("beam")
        t0 = time.perf_counter()

        def flipped(*_: object) -> None:
            Window.unbind(on_flip=flipped)
            samples.append((time.perf_counter() - t0) * 1000)
            t1 = time.perf_counter()
            recheck(app.store.beam(app.beam_id))
            rechecks.append((time.perf_counter() - t1) * 1000)
            if i + 1 < len(spacings):
                Clock.schedule_once(lambda _dt: change(i + 1), 0.05)
            else:
                out["refresh_ms"], out["recheck_ms"] = samples, rechecks
                out["sync_ms"], out["render_ms"] = sync_ms, render_ms
                finish(app)

        Window.bind(on_flip=flipped)
        screen.set_now("purlin_spacing_mm", spacings[i])  # save, recheck, redraw the panel; then the frame
        sync_ms.append((time.perf_counter() - t0) * 1000)
        render_ms.append(screen.refresh_ms)

    def open_beam() -> None:
        app.open_site(app.store.sites()[0].id)
        app.open_beam(next(i for i, r in app.store.beams(app.site_id) if r["mark"] == "RB-2"))
        Clock.schedule_once(lambda _dt: change(0), 0.3)

    app.bind(on_start=lambda *_: on_first_frame(open_beam))
    app.run()
