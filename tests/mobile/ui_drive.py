"""Drive the real app under Xvfb through widget ids and save screenshots (run by test_ui.py)."""

import sys
from pathlib import Path

from kivy.clock import Clock

from mobile.app import BracewalkApp

OUT = Path(sys.argv[2])
OUT.mkdir(parents=True, exist_ok=True)
app = BracewalkApp(sys.argv[1])
steps = []


def shot(name):
    app.root_window.screenshot(str(OUT / f"{name}.png"))


def step(fn):
    steps.append(fn)
    return fn


@step
def sites():
    shot("01-sites")
    app.root.get_screen("sites").ids.site_list.children[-1].trigger_action(0)


@step
def site():
    shot("02-site")
    beam_id = next(i for i, r in app.store.beams(app.site_id) if r["mark"] == "RB-1")
    app.open_beam(beam_id)


@step
def beam_purlins():
    screen = app.root.get_screen("beam")
    before = screen.vm.result.bending[0].kl
    screen.ids.purlin_spacing_mm.text = "2.4 m"
    screen.field("purlin_spacing_mm", screen.ids.purlin_spacing_mm.text)
    assert screen.vm.result.bending[0].kl < before, "live recheck did not change"


@step
def beam_shot():
    shot("03-beam")


@step
def toggle_restraint():
    screen = app.root.get_screen("beam")
    screen.ids.bearing2_rotation.trigger_action(0)
    assert "IMMEDIATE" in screen.immediate_text


@step
def raise_it():
    screen = app.root.get_screen("beam")
    shot("04-immediate")
    screen.ids.raise_button.trigger_action(0)
    assert "Raised D-" in screen.error_text


@step
def issue():
    app.go("site")


@step
def issue2():
    screen = app.root.get_screen("site")
    screen.ids.issue.trigger_action(0)
    assert "Issued" in screen.issued_text


@step
def export():
    shot("05-issued")
    from storage.bundle import export_bundle

    export_bundle(app.store, OUT / "ui.bwsync")


@step
def done():
    print("UI-OK")
    app.stop()


def run_next(_dt, i=None):
    if i is None:
        i = [0]
    try:
        steps[i[0]]()
    except Exception as exc:  # report, then stop the app so the test sees the failure
        print(f"UI-FAIL at {steps[i[0]].__name__}: {exc!r}")
        app.stop()
        return
    i[0] += 1
    if i[0] < len(steps):
        Clock.schedule_once(run_next, 0.6)


Clock.schedule_once(run_next, 1.5)
app.run()
