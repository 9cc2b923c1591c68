"""Drive the real app under Xvfb through widget ids and save screenshots (run by test_ui.py).

usage: ui_drive.py DB OUT_DIR [flow]; flows: "main" (the whole job), "hub" (enrol at the hub named by
BRACEWALK_TEST_HUB_URL with the code in BRACEWALK_TEST_HUB_CODE, log a change, it syncs by itself),
"layout" (every screen held
against the layout rules at the geometry the test set with KIVY_DPI / KIVY_METRICS_DENSITY and the
window size), "type-then-kill" (type a note, wait for the autosave, then SIGKILL this process),
"relaunch" (print what the note field shows), "notice-layout" (the notice screen at the geometry: its
problems printed as NOTICE-PROBLEM lines), "beam-geometry" (a passing, a deficient and a
not-established beam held to ``beam_problems`` at the geometry: test_ui_beam.py), "defsite-geometry"
(the sites screen, the demo site and its deficiency with the longest required action, every text whole, at
the geometry: test_ui_defsite.py).
Prints UI-OK (or UI-FAIL at <step>) and flushes, then stops the app.
"""

import gc
import inspect
import os
import signal
import sys
from itertools import pairwise
from pathlib import Path

from kivy.clock import Clock

from mobile.app import BracewalkApp

DB, OUT = sys.argv[1], Path(sys.argv[2])
FLOW = sys.argv[3] if len(sys.argv) > 3 else "main"
OUT.mkdir(parents=True, exist_ok=True)
app = BracewalkApp(DB)
steps = []
state = {"i": 0, "frame_waits": 0}
KILL_NOTE = "bearing plate at S2 bent; photo 14"
# a field note of 2,000 characters (the field review's long note): sentences a reviewer writes, cut at a word
_NOTE_SENTENCES = (
    "Bearing plate at S2 bent about 6 mm at its outer edge; hanger nails at S1 short (38 mm seen, 64 mm "
    "specified on S-201 rev 2). Purlin clip missing at grid 4, purlins there sit loose on the top edge. "
    "Checked from the scissor lift with the site super present, photos 14 to 22. Top stamp not visible: "
    "the member is painted. Moisture reading 17 % at midspan, 19 % near S2 where the roof drain leaks. "
)
LONG_NOTE = (_NOTE_SENTENCES * 6)[:1988].rsplit(" ", 1)[0] + " end of note."
FOUR_SPANS = ("7200; 7200; 6000; 4800", "7200 mm; 7200 mm; 6000 mm; 4800 mm")  # typed, then as the form shows it
KEYPAD_KEY_COUNT = 20  # digits, ; ' " . / space, m, mm, clear and back (widgets.KEYPAD_KEYS)


FRAMES_BEFORE_SHOT = 2  # the frame that draws this step's changes, then one more for what they set off


def shot(name):
    """Save the screen as the step left it (a step yields from this generator).

    Reading the window at once returns the last frame drawn, from before the step's changes (a state set
    in this tick, by the step or by a timer just before it, is drawn only at the end of the tick). So the
    step yields here; the runner asks for a redraw, resumes the step in the ``on_flip`` of the second frame
    drawn from now, when that frame is complete and not yet swapped (``frame_waits`` counts the waits),
    and the pixels read are the state the step saw.
    """
    yield FRAMES_BEFORE_SHOT
    written = app.root_window.screenshot(str(OUT / f"{name}.png"))  # Kivy appends a counter to the name
    Path(written).replace(OUT / f"{name}.png")


def _window_rect(w):
    x, y = w.to_window(*w.pos)
    return x, y, x + w.width, y + w.height


def _clip(rect, box):
    return max(rect[0], box[0]), max(rect[1], box[1]), min(rect[2], box[2]), min(rect[3], box[3])


def _shown(w):
    """The part of w on screen: clipped by every ScrollView around it and by the window (None if hidden)."""
    from kivy.uix.scrollview import ScrollView

    rect = _window_rect(w)
    node = w
    while node is not None and node is not node.parent:
        if node.opacity == 0:
            return None
        parent = node.parent
        if isinstance(parent, ScrollView):
            rect = _clip(rect, _window_rect(parent))
        node = parent
        if node is app.root_window:
            break
    rect = _clip(rect, (0, 0, *app.root_window.size))
    return rect if rect[2] - rect[0] > 1 and rect[3] - rect[1] > 1 else None


def _panel_problem(w):
    """A scroll panel shown with less than 15 mm of height (None when fine or not a shown panel)."""
    from kivy.metrics import mm
    from kivy.uix.scrollview import ScrollView

    if not isinstance(w, ScrollView) or w.opacity == 0:
        return None
    if _in_scroll_view(w):  # a list in a page that scrolls: its own height (the page brings it into view)
        height = w.height
    else:
        shown = _shown(w)
        height = 0 if shown is None else shown[3] - shown[1]
    if height < mm(15) - 1:
        return f"panel {w.__class__.__name__} in {w.parent.__class__.__name__} has no height"
    return None


def _in_scroll_view(w):
    """Whether a ScrollView holds ``w`` (somewhere above it)."""
    from kivy.uix.scrollview import ScrollView

    node = w.parent
    while node is not None and node is not node.parent:
        if isinstance(node, ScrollView):
            return True
        node = node.parent
    return False


def _leaf_problems(w, what):
    """Off screen sideways, a target under 15 mm, text spilling out of its label."""
    from kivy.metrics import mm
    from kivy.uix.button import Button
    from kivy.uix.label import Label
    from kivy.uix.textinput import TextInput

    problems = []
    full = _window_rect(w)
    if full[0] < -1 or full[2] > app.root_window.width + 1:
        problems.append(f"{what} off screen sideways")
    small = w.height < mm(15) - 1 or w.width < mm(15) - 1
    if isinstance(w, Button | TextInput) and not w.disabled and small:
        problems.append(f"{what} target {w.width / mm(1):.0f} x {w.height / mm(1):.0f} mm < 15 mm")
    if isinstance(w, Label) and w.text.strip() and not w.shorten:
        tw, th = w.texture_size
        if th > w.height + 2 or tw > w.width + 2:
            problems.append(f"{what} text {tw:.0f}x{th:.0f}px spills out of {w.width:.0f}x{w.height:.0f}px")
    return problems


def _overlaps(leaves):
    """Every pair of shown leaves whose rectangles overlap by more than 2 px both ways."""
    out = []
    for i, (a, ra) in enumerate(leaves):
        for b, rb in leaves[i + 1 :]:
            if min(ra[2], rb[2]) - max(ra[0], rb[0]) > 2 and min(ra[3], rb[3]) - max(ra[1], rb[1]) > 2:
                out.append(f"{a} overlaps {b}")
    return out


def widget_problems(root):
    """Overlap, text spilling out of its box, a zero-size panel, off-screen controls, targets under 15 mm."""
    from kivy.uix.button import Button
    from kivy.uix.label import Label
    from kivy.uix.textinput import TextInput

    problems, leaves = [], []
    for w in root.walk(restrict=True):
        panel = _panel_problem(w)
        if panel:
            problems.append(panel)
        if not isinstance(w, Button | TextInput | Label):
            continue
        if isinstance(w, Label) and not isinstance(w, Button) and not w.text.strip():
            continue
        shown = _shown(w)
        if shown is None:
            continue
        what = f"{type(w).__name__} {getattr(w, 'text', '')[:32]!r}"
        problems += _leaf_problems(w, what)
        leaves.append((what, shown))
    problems += _overlaps(leaves)
    return problems


def layout_problems(screen_name):
    """The layout rules (``widget_problems``) on a screen."""
    return [f"{screen_name}: {p}" for p in widget_problems(screen(screen_name))]


def popup_problems():
    """The layout rules on what is open over the screen (a popup's content); none open is a problem too."""
    from kivy.uix.modalview import ModalView

    views = [w for w in app.root_window.children if isinstance(w, ModalView)]
    if not views:
        return ["nothing open over the screen"]
    return [p for v in views for p in widget_problems(v.content if hasattr(v, "content") else v)]


def _enrol_form(s):
    """What the Sync screen shows of its enrolment form (for an assertion's message)."""
    ids = s.ids
    return s.enrolled_text, s.form_shown, ids.enroll.height, ids.enroll.disabled, ids.enrol_again.height


def check_layout(screen_name):
    problems = layout_problems(screen_name)
    assert not problems, "\n".join(problems[:12])


def after_frames(n, then):
    """Call ``then()`` in the ``on_flip`` of the n-th frame drawn from now (drawn, not yet on screen)."""
    window = app.root_window
    left = [n]

    def flipped(*_):
        left[0] -= 1
        if left[0] > 0:
            window.canvas.ask_update()  # draw the next frame even if nothing else changes
            return
        window.unbind(on_flip=flipped)
        state["frame_waits"] += 1
        then()

    window.bind(on_flip=flipped)
    window.canvas.ask_update()


def step(fn):
    steps.append(fn)
    return fn


def screen(name=None):
    return app.root.get_screen(name or app.root.current)


def field(name):
    return screen("beam").fields[name].ids.input


def type_into(name, text):
    w = field(name)
    w.focus = True
    w.text = text
    w.focus = False  # leaving the field saves it at once


def pick(name, value):
    from mobile.viewmodels.beam import words

    shown = words(value)  # pickers show the trade's words, not stored codes
    assert shown in screen("beam").fields[name].values, (name, screen("beam").fields[name].values)
    screen("beam").fields[name].ids.input.text = shown


def tap_photo(fx, fy):
    """Tap the photo at fractions (fx, fy) of the photo from its top-left, as a finger would."""

    class Tap:
        def __init__(self, x, y):
            self.x, self.y, self.pos, self.ud = x, y, (x, y), {}

    w = screen("photo").ids.photo
    x0, y0, pw, ph = w.shown_rect()
    assert pw > 0, "photo not shown"
    assert ph > 0, "photo not shown"
    assert w.on_touch_down(Tap(x0 + fx * pw, y0 + (1 - fy) * ph))


def demo_beam(mark):
    return next(i for i, r in app.store.beams(app.site_id) if r["mark"] == mark)


def deficiency_list_problems(box, immediate):
    """What is wrong with the open-deficiency list on screen (empty when nothing).

    Its view at least 30 mm tall; the IMMEDIATE heading (with its count) and first item in view at its top;
    the rest reached by scrolling when they do not all fit.
    """
    from kivy.metrics import mm

    found = []
    view = _window_rect(box.parent)
    if view[3] - view[1] < mm(30):
        found.append(f"site: open-deficiency list only {(view[3] - view[1]) / mm(1):.0f} mm tall")
    rows = [w for w in box.walk(restrict=True) if any(d.number in getattr(w, "text", "") for d in immediate)]
    assert len(rows) == len(immediate) > 0, (len(rows), len(immediate))
    heading = next(w for w in box.walk(restrict=True) if getattr(w, "text", "").startswith("▲ IMMEDIATE"))
    if not heading.text.endswith(f" ({len(immediate)})"):
        found.append(f"site: IMMEDIATE heading without its count: {heading.text}")
    for w in (heading, rows[0]):
        r = _window_rect(w)
        if r[1] < view[1] - 1 or r[3] > view[3] + 1:
            found.append(f"site: IMMEDIATE heading or first item not in view: {w.text[:40]}")
    below = [w for w in rows if _window_rect(w)[1] < view[1] - 1]
    if below and box.height <= view[3] - view[1]:
        found.append("site: IMMEDIATE items below the fold and the list does not scroll")
    return found


def text_needs(w):
    """(width, height) in px that a label's text takes at its wrap width with no height limit.

    A label whose ``text_size`` fixes its height is drawn clipped to that height and reports that height as
    its ``texture_size``; the text it cut is found only by laying the text out again without the limit.
    """
    from kivy.core.text import Label as CoreLabel
    from kivy.core.text.markup import MarkupLabel

    options = {**w._label.options, "text": w.text, "text_size": (w.text_size[0], None)}  # options keep the first text
    return (MarkupLabel if w.markup else CoreLabel)(**options).render()


def _drawn(w):
    """Whether w is drawn at all (in view or scrolled out of it): nothing above it transparent, some height."""
    node = w
    while node is not None and node is not node.parent and node is not app.root_window:
        if node.opacity == 0:
            return False
        node = node.parent
    return w.height > 1 and w.width > 1


def cut_text_problems(root):
    """Labels drawn (in view or scrolled out of it) whose text needs more height than their box.

    ``texture_size`` cannot show it when ``text_size`` fixes the height (see text_needs).
    """
    from kivy.uix.label import Label

    found = []
    for w in root.walk(restrict=True):
        if not isinstance(w, Label) or not w.text.strip() or w.shorten or w.text_size[1] is None:
            continue
        if not _drawn(w):
            continue
        needs = text_needs(w)[1]
        if needs > w.height + 2:
            found.append(f"text {w.text[:40]!r} needs {needs:.0f} px, its box is {w.height:.0f} px high")
    return found


def drawn_lines(w):
    """The lines a label draws, as laid out (an ellipsis or dropped lines show here, not in its text)."""
    w.texture_update()
    return ["".join(word.text for word in line.words) for line in w._label._cached_lines]


def mid_word_break(w):
    """The lines of a wrapped label when one of its words is split across two lines ('No restrai / nt'), else ''.

    A file path (a word with a '/') has no space to break at: it may break anywhere, as a file manager shows it.
    """
    lines = drawn_lines(w)
    drawn = [t for line in lines for t in line.split()]
    if drawn == w.text.split():
        return ""
    pieces = iter(drawn)
    for word in w.text.split():
        got = next(pieces, "")
        while "/" in word and got != word and word.startswith(got):
            more = next(pieces, "")
            if not more:
                break
            got += more
        if got != word:
            return " / ".join(line.strip() for line in lines)
    return ""


def _luminance(rgb):
    """WCAG 2 relative luminance of an 8-bit sRGB colour."""
    lin = [c / 255 / 12.92 if c <= 10 else ((c / 255 + 0.055) / 1.055) ** 2.4 for c in rgb]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]


def drawn_contrast(png, w):
    """WCAG contrast ratio of a widget as drawn in a screenshot (png).

    Its commonest colour (the background) against the colour farthest from it in luminance (the text's strokes).
    """
    from PIL import Image

    x0, y0, x1, y1 = _shown(w)
    with Image.open(png) as img:
        rgb = img.convert("RGB")
        top = rgb.height
        box = rgb.crop((int(x0) + 6, int(top - y1) + 6, int(x1) - 6, int(top - y0) - 6))
        colours = box.getcolors(box.width * box.height)
    background = max(colours)[1]
    lb = _luminance(background)
    lt = max((abs(_luminance(c) - lb), _luminance(c)) for _, c in colours)[1]
    return (max(lb, lt) + 0.05) / (min(lb, lt) + 0.05)


def field_cut(w, path=False):
    """A text field whose text (its hint when empty) is wider than the field or on more lines than it shows.

    ``path``: the text is a file path, which may break beside a '/' as well as at a space.
    """
    text = w.text or w.hint_text
    if not text.strip():
        return []
    lines = w._lines if w.text else w._hint_text_lines
    left, top, right, bottom = w.padding
    widest = max(w._get_text_width(line, w.tab_width, w._label_cached) for line in lines)
    tall = len(lines) * (w.line_height + w.line_spacing) + top + bottom
    what = f"{w.__class__.__name__} {'text' if w.text else 'hint'} {text[:40]!r}"
    found = []
    if widest > w.width - left - right + 1:
        found.append(f"{what}: {widest:.0f} px wide in a field {w.width - left - right:.0f} px wide inside")
    if tall > w.height + 1:
        found.append(f"{what}: {len(lines)} lines need {tall:.0f} px, the field is {w.height:.0f} px high")
    at = ("/", "\\") if path else ()  # a path also breaks beside its separators
    broken = [
        f"{a.strip()} / {b.strip()}"
        for a, b in pairwise(lines)
        if not (a[-1:].isspace() or a[-1:] in at or b[:1] in at)
    ]
    if broken:  # a line that wraps ends at a space: not '(utilisation 1.' / '66'
        found.append(f"{what}: a word broken across lines: {broken[0]!r}")
    return found


def typed_value_problems(root, free_text=()):
    """Text fields under ``root`` holding a value that does not draw whole (in view or scrolled out of it).

    The form shows a stored length with its unit and up to six digits ("234.95 mm", "388.938 mm"); a field
    narrower than that showed only its end ("5 mm" for 234.95 mm, "38.1 r" for 38.1 mm: session-34 review).
    ``free_text``: fields of free text (a note) left out: one line of a sentence scrolls sideways as typed.
    """
    from kivy.uix.textinput import TextInput

    fields = [w for w in root.walk(restrict=True) if isinstance(w, TextInput) and w not in free_text]
    return [p for w in fields if w.text and _drawn(w) for p in field_cut(w)]


def _in_tree(root, w):
    """Whether ``w`` is among ``root``'s widgets (a widget taken out of a form keeps its size, not its parent)."""
    return any(x is w for x in root.walk(restrict=True))


def _caution_bands(s):
    return [w for w in s.walk(restrict=True) if "judgement of the engineer of record" in getattr(w, "text", "")]


UNSEEN = "not seen or not recorded is taken as the unfavourable case"  # what the caution band must also say


def caution_problems(s):
    """The caution band whole on the window, saying that what was not seen or not recorded is taken as unfavourable."""
    bands = [w for w in _caution_bands(s) if _shown(w) == _window_rect(w)]
    if not bands:
        return ["the caution is not on screen whole"]
    if not any(UNSEEN in " ".join(w.text.split()) for w in bands):
        return [f"the caution does not say what was {UNSEEN}: {bands[0].text[:80]!r}"]
    return []


SYSTEM_DEFAULT = "not recorded (taken as single member)"  # a sawn member's system picker before a choice
BANNER_OPEN_MAX = 0.5  # the opened IMMEDIATE banner takes at most this share of the window's height


def _banner_opened(s):
    return bool(s.immediate_text) and not getattr(s.ids.immediate, "folded", True)


def _banner_problems(s, mm):
    """The IMMEDIATE banner saying IMMEDIATE; folded: whole in view, at most 25 mm tall.

    Opened: at most ``BANNER_OPEN_MAX`` of the window's height on screen, its first line (the first finding) in
    view; the rest is reached by scrolling it (``banner_end_problems``).
    """
    banner, found = s.ids.immediate, []
    if not s.immediate_text:
        return found
    if "▲ IMMEDIATE" not in banner.text:
        found.append(f"the IMMEDIATE banner not saying IMMEDIATE: {banner.text[:60]!r}")
    shown, whole = _shown(banner), _window_rect(banner)
    if not _banner_opened(s):
        if shown != whole:
            found.append(f"the folded IMMEDIATE banner not whole in view: {banner.text[:60]!r}")
        if banner.height > 25 * mm:
            found.append(f"the IMMEDIATE banner {banner.height / mm:.0f} mm tall (folded: at most 25 mm)")
        return found
    win_h = app.root_window.height
    at_top = getattr(banner.parent, "scroll_y", 1) >= 0.999  # as opened; scrolled on, its later lines show
    if at_top and (shown is None or shown[3] < whole[3] - 1):
        found.append(f"the opened IMMEDIATE banner's first line is not in view: {banner.text[:60]!r}")
    if shown is not None and shown[3] - shown[1] > BANNER_OPEN_MAX * win_h + 1:
        share = (shown[3] - shown[1]) / win_h
        found.append(f"the opened IMMEDIATE banner takes {share:.0%} of the window's height (> {BANNER_OPEN_MAX:.0%})")
    return found


def banner_end_problems(s):
    """The opened banner scrolled to its end: its last line in view (every finding reachable), else what is not."""
    from kivy.uix.scrollview import ScrollView

    banner = s.ids.immediate
    shown, whole = _shown(banner), _window_rect(banner)
    if shown is not None and shown[1] <= whole[1] + 1 and shown[3] >= whole[3] - 1:
        return []  # whole in view
    if not isinstance(banner.parent, ScrollView):
        return ["the opened IMMEDIATE banner is cut by the window and cannot be scrolled: its last lines unreachable"]
    if shown is None or shown[1] > whole[1] + 1:
        return ["the opened IMMEDIATE banner scrolled to its end does not show its last line"]
    return []


def _top_problems(s):
    """The top bar (back, title, undo) whole on the window: an opened banner pushed it off the top."""
    found = []
    for name in ("back", "title", "undo"):
        w = s.ids[name]
        if _shown(w) != _window_rect(w):
            found.append(f"{name} {getattr(w, 'text', '')[:30]!r} not whole on the window: {_window_rect(w)}")
    return found


def _column_problems(s, mm):
    """Portrait: the form stacked, at least 60 % of the window wide; form and panel at least 50 mm in view.

    With the IMMEDIATE banner opened to be read, the columns give way to it but keep 25 mm each.
    """
    win_w, win_h = app.root_window.size
    form, panel, found = s.ids.form_scroll, s.ids.panel.parent, []
    if win_h > win_w and form.width < 0.6 * win_w:
        found.append(f"portrait: the form is {form.width / win_w:.0%} of the window wide (< 60 %)")
    least = 25 if _banner_opened(s) else 50
    for what, view in (("form", form), ("recheck panel", panel)):
        r = _shown(view)
        if r is None or r[3] - r[1] < least * mm:
            tall = 0 if r is None else (r[3] - r[1]) / mm
            found.append(f"{what} has {tall:.0f} mm of height in view (< {least} mm)")
    return found


def beam_problems(s, dpi):
    """The beam screen held to the session-32 review's findings at the real ``dpi`` (empty when none).

    No text cut by its box; restraint buttons wrap between words; Mark and Gridline at least 30 mm wide;
    the columns (``_column_problems``) and the IMMEDIATE banner (``_banner_problems``); the caution on
    screen, whole.
    """
    mm = dpi / 25.4  # px per mm at the tablet's real dpi
    found = cut_text_problems(s) + _column_problems(s, mm) + _banner_problems(s, mm) + _top_problems(s)
    found += typed_value_problems(s)  # the note too: a long note is read whole, not one line scrolled sideways
    for (i, key, _state), b in s.restraint_buttons.items():
        if broken := mid_word_break(b):
            found.append(f"S{i} {key} button {b.text!r} breaks a word: {broken}")
    for name in ("mark", "gridline"):
        box = s.fields[name].ids.input
        if box.width < 30 * mm:
            found.append(f"{name} input {box.width / mm:.0f} mm wide (< 30 mm)")
    found += caution_problems(s)
    from kivy.uix.spinner import Spinner

    for w in s.walk(restrict=True):  # a picker's chosen value wider than the picker is drawn past its edges
        if isinstance(w, Spinner) and w.text.strip() and _drawn(w):
            w.texture_update()
            if w.texture_size[0] > w.width + 2:
                found.append(f"picker {w.text!r}: {w.texture_size[0]:.0f} px of text in {w.width:.0f} px")
    title = s.ids.title  # mark, level and grid whole: portrait cut the middle out ("RB-3 · Ro...grid C / 2-3")
    shown = " ".join(line.strip() for line in drawn_lines(title))
    if shown.split() != title.text.split() or title.texture_size[1] > title.height + 2:
        tall = f"{title.texture_size[1]:.0f} px in {title.height:.0f}"
        found.append(f"the title {title.text!r} shows as {shown!r} ({tall})")
    return found


def beam_measures(s, dpi):
    """Sizes in mm at the real dpi, printed for the record (before / after figures)."""
    mm = dpi / 25.4
    form, panel = _shown(s.ids.form_scroll), _shown(s.ids.panel.parent)
    return (
        f"form {s.ids.form_scroll.width / mm:.0f} mm wide, {(form[3] - form[1]) / mm if form else 0:.0f} mm in view; "
        f"panel {(panel[3] - panel[1]) / mm if panel else 0:.0f} mm in view; "
        f"banner {s.ids.immediate.height / mm:.0f} mm; "
        f"caution {max((w.height for w in _caution_bands(s)), default=0) / mm:.0f} mm; "
        f"mark {s.fields['mark'].ids.input.width / mm:.0f} mm"
    )


if FLOW == "main":

    @step
    def first_frame():
        # after the first frame the app froze its start-up heap (mobile.app.freeze_start_heap); collector on
        if gc.get_freeze_count() == 0:
            raise TimeoutError  # no frame drawn yet: the runner retries
        assert gc.isenabled()

    @step
    def sites():
        yield from shot("01-sites")
        screen().ids.site_list.children[-1].trigger_action(0)

    @step
    def site():
        assert app.root.current == "site"
        yield from shot("02-site")
        rows = [w for w in screen().ids.beam_list.layout_manager.children if getattr(w, "beam_id", "")]
        assert len(rows) >= 5, f"the beam list shows {len(rows)} beams"  # the demo has 13; the rest scroll
        screen().ids.visit.trigger_action(0)
        form = screen().visit_form.ids
        form.visit_reviewer.text = "Priya Okonkwo-Lind"
        form.visit_weather.text = "clear, -4 °C"
        form.visit_scope.text = "Roof grid G; revisit of RB-5"
        form.visit_not_scope.text = "Level 1 walls"

    @step
    def visit_form_shot():
        yield from shot("02b-visit-form")
        screen().visit_form.ids.start_visit.trigger_action(0)
        assert "Priya" in screen().visit_text

    @step
    def new_beam():
        screen("site").ids.new_beam.trigger_action(0)
        assert app.root.current == "beam"

    @step
    def log_new_beam():
        type_into("mark", "RB-9")
        type_into("level", "Roof")
        type_into("gridline", "G / 2-3")
        pick("material", "glulam")
        pick("species", "D.Fir-L")
        pick("grade", "24f-E")
        type_into("b_mm", "130")
        type_into("d_mm", "456")
        type_into("spans", "7.2 m")
        type_into("tributary_m", "3.0")
        basis = app.store.site(app.site_id).design_basis
        # the line loads shown are the ones checked: derived from the width at once (tributary x kPa)
        assert field("snow_kn_m").text == f"{round(basis.snow_kpa * 3.0, 3):g}", field("snow_kn_m").text
        assert "derived" in screen("beam").fields["snow_kn_m"].echo
        pick("material", "sawn")  # b = 130 mm is too wide for sawn lumber in the tables: refused
        assert field("material").text == "Glulam", field("material").text  # the picker shows the value in force
        assert "Stays Glulam" in screen("beam").fields["material"].error
        pick("top_braced_by", "purlins")
        type_into("purlin_spacing_mm", "1200")
        pick("top_fastened", "yes")  # not recorded would be taken as not fastened (issue 16)
        pick("top_stamp", "up")
        pick("use", "roof_no_ceiling")  # not recorded would be held to the strictest limit, L/360 (issue 16)
        assert screen("beam").vm.result is None  # nothing rechecked on values not yet entered
        assert "S1 lateral restraint" in screen("beam").vm.recheck_error, screen("beam").vm.recheck_error
        for i in (1, 2):
            w = screen("beam").length_inputs[i]
            w.focus = True
            w.text = '5 1/2"'  # 139.7 mm
            w.focus = False
            for key in ("lateral", "rotation"):
                screen("beam").restraint_buttons[(i, key, "yes")].trigger_action(0)
        rec = app.store.beam_record(app.beam_id)
        assert rec["bearings"][0]["length_mm"] == 139.7, rec["bearings"]
        assert rec["mark"] == "RB-9", rec
        assert rec["spans_mm"] == [7200], rec
        assert screen("beam").vm.result.status.value == "ok", screen("beam").vm.result.status

    @step
    def gloves_keypad():
        tf = screen("beam").fields["d_mm"]
        popup = tf.open_keypad()
        keys = [b.text for b in popup.content.children[1].children[::-1]]  # the grid, in reading order
        assert "," not in keys
        assert "C" in keys
        assert keys.index(";") < 4  # ';' in the top row, far from OK
        for k in ("C", "4", "9", "4"):
            next(b for b in popup.content.children[1].children if b.text == k).trigger_action(0)
        yield from shot("03a-keypad")
        popup.dismiss()  # a tap outside: what was typed is kept and entered
        assert app.store.beam_record(app.beam_id)["d_mm"] == 494, app.store.beam_record(app.beam_id)["d_mm"]

    @step
    def gloves_depth_picks():
        tf = screen("beam").fields["d_mm"]
        tf.ids.quick.is_open = True  # the standard depths open at the current value, not at the top

    @step
    def gloves_depth_picks_shown():
        tf = screen("beam").fields["d_mm"]
        assert tf.quick_near == "494", tf.quick_near
        yield from shot("03c-depth-picks")
        tf.ids.quick.is_open = False
        folder = Path(os.environ["HOME"]) / "site photos"
        folder.mkdir(parents=True, exist_ok=True)
        from PIL import Image

        Image.new("RGB", (40, 30), (90, 60, 30)).save(folder / "rb9-end.png")
        screen("beam").ids.add_photo.trigger_action(0)

    @step
    def gloves_file_picker():
        from kivy.metrics import mm

        popup = app.root_window.children[0]
        rows = [w for w in popup.walk() if getattr(w, "text", "").startswith("▸  site photos")]
        assert rows, rows
        assert rows[0].height >= mm(15) - 1, rows
        rows[0].trigger_action(0)  # one tap opens the folder
        yield from shot("03d-file-picker")
        next(w for w in popup.walk() if getattr(w, "text", "") == "rb9-end.png").trigger_action(0)
        assert screen("beam").vm.photo_count() == 1

    @step
    def open_photos():
        screen("beam").ids.photos.trigger_action(0)
        assert app.root.current == "photo"

    @step
    def mark_photo():
        import hashlib

        s = screen("photo")
        assert "Photo 1 of 1" in s.caption, s.caption
        assert "by " in s.caption, s.caption  # who took it (the device user) and when
        assert "taken " in s.caption, s.caption
        tap_photo(0.5, 0.5)  # a ring
        s.ids.mode_arrow.trigger_action(0)
        tap_photo(0.15, 0.85)  # arrow tail
        tap_photo(0.42, 0.55)  # arrow head
        assert [m["kind"] for m in s.vm.marks] == ["ring", "arrow"], s.vm.marks
        s.ids.save.trigger_action(0)
        photo = s.vm.current()
        assert s.vm.saved_marks(photo["id"]) == s.vm.marks
        assert hashlib.sha256(app.store.blob(photo["sha256"])).hexdigest() == photo["sha256"]  # never altered

    @step
    def photo_shot():
        yield from shot("03e-photo-marked")
        screen("photo").ids.back.trigger_action(0)
        assert app.root.current == "beam"

    @step
    def recheck_sheet():
        screen("beam").ids.sheet.trigger_action(0)  # the beam's recheck sheet, written to the export folder
        popup = app.root_window.children[0]
        assert popup.title == "Recheck sheet written", popup.title
        folder = Path(os.environ["HOME"]) / "bracewalk-exports"
        (written,) = folder.glob("recheck-RB-9-*.pdf")
        assert any(str(written) in getattr(w, "text", "") for w in popup.walk()), "the popup names the file"
        assert written.read_bytes().startswith(b"%PDF")
        yield from shot("03f-recheck-sheet-written")
        popup.dismiss()

    @step
    def bearings_view():
        yield from shot("03-beam-new")
        screen("beam").ids.form_scroll.scroll_y = 0.42

    @step
    def purlins_wider():
        yield from shot("03b-beam-bearings")
        screen("beam").ids.form_scroll.scroll_y = 1
        s = screen("beam")
        before = s.vm.result.bending[0].kl
        type_into("purlin_spacing_mm", "2400")
        after = s.vm.result.bending[0].kl
        assert after < before, f"KL did not drop: {before} -> {after}"
        print(f"KL {before:.3f} -> {after:.3f}; panel refresh {s.refresh_ms:.1f} ms", flush=True)

    @step
    def trace_popup():
        s = screen("beam")
        rows = s.ids.panel.children[::-1]
        rows[1].children[-1].trigger_action(0)  # the first bending line

    @step
    def trace_shot():
        yield from shot("04-trace")
        app.root_window.children[0].dismiss()

    @step
    def table_rows_popup():
        s = screen("beam")
        assert s._rows_button.text.startswith("Table rows used:"), s._rows_button.text
        s._rows_button.trigger_action(0)

    @step
    def table_rows_shot():
        popup = app.root_window.children[0]
        text = "\n".join(w.text for w in popup.walk() if hasattr(w, "text") and isinstance(w.text, str))
        assert "[MEMORY" in text, text[:400]  # each row with its status (issue 16 item 6)
        assert "[confirmed" in text, text[:400]
        yield from shot("04b-table-rows")
        popup.dismiss()

    @step
    def restraint_off():
        s = screen("beam")
        s.restraint_buttons[(2, "rotation", "no")].trigger_action(0)  # chosen directly, not cycled
        assert "IMMEDIATE" in s.immediate_text, s.immediate_text

    @step
    def raise_it():
        yield from shot("05-beam-immediate")
        s = screen("beam")
        raise_buttons = [w for w in s.ids.panel.children if getattr(w, "text", "").startswith("Raise deficiency")]
        raise_buttons[-1].trigger_action(0)  # the first finding (children are in reverse order)
        assert "Raised D-" in s.raised_text
        state["raised"] = s.raised_text.split()[-1]
        assert any(b.text.endswith(f"raised as {state['raised']}") and b.disabled for b in s.ids.panel.children)

    @step
    def back_to_site():
        screen("beam").ids.back.trigger_action(0)
        assert app.root.current == "site"

    @step
    def open_deficiency():
        yield from shot("06-site-after")
        number = state["raised"]
        d = next(d for d in app.store.deficiencies(app.site_id, open_only=True) if d.number == number)
        app.open_deficiency(d.id)

    @step
    def device_user():
        s = screen("deficiency")
        assert not s.ids.moves.children or "no user" in s.who_text
        s.ids.device_setup.trigger_action(0)
        yield from shot("device-form")
        # its text is in the theme's colour, so it sits on the theme's background (it was on the popup's dark grey)
        from PIL import Image

        content = s.device_popup.content
        x, y = content.to_window(content.x + 3, content.top - 3)
        with Image.open(OUT / "device-form.png") as im:
            got = im.convert("RGB").getpixel((int(x), int(im.height - y)))
        want = tuple(round(255 * c) for c in app.theme_bg[:3])
        assert all(abs(g - w) <= 3 for g, w in zip(got, want, strict=True)), f"form background {got}, theme {want}"
        form = content.ids
        form.device_name.text = "Priya Okonkwo-Lind"
        form.device_role.text = "reviewer"
        form.device_save.trigger_action(0)
        assert "Priya" in s.who_text, s.who_text

    @step
    def corrected_needs_the_beam_updated():
        s = screen("deficiency")
        s.ids.note.text = "blocking installed both sides"
        buttons = {b.text: b for b in s.ids.moves.children}
        buttons["Mark corrected"].trigger_action(0)
        assert "Not marked corrected" in s.message, s.message
        s.ids.update_beam.trigger_action(0)
        assert app.root.current == "beam"

    @step
    def record_installed():
        screen("beam").restraint_buttons[(2, "rotation", "yes")].trigger_action(0)
        assert screen("beam").vm.result.status.value == "ok"
        screen("beam").ids.back.trigger_action(0)
        app.open_deficiency(next(d.id for d in app.store.deficiencies(app.site_id) if d.number == state["raised"]))

    @step
    def move_status2():
        s = screen("deficiency")
        s.ids.note.text = "blocking installed both sides"
        buttons = {b.text: b for b in s.ids.moves.children}
        buttons["Mark corrected"].trigger_action(0)
        assert "corrected" in s.history_text, s.history_text
        assert "as now recorded: ● OK" in s.history_text, s.history_text
        assert "Verify the correction" in {b.text for b in s.ids.moves.children}  # the device's user is a reviewer

    @step
    def rereview_verified():
        s = screen("deficiency")
        assert s.is_reviewer
        s.ids.note.text = "blocking seen both sides at S2"
        s.ids.rereview_verified.trigger_action(0)
        assert "Re-review recorded: verified" in s.message, s.message
        assert "verified; blocking seen both sides at S2" in s.rereview_text, s.rereview_text

    @step
    def deficiency_shot():
        yield from shot("07-deficiency")
        screen("deficiency").ids.back.trigger_action(0)
        screen("site").ids.notice.trigger_action(0)
        assert app.root.current == "notice"

    @step
    def preview():
        screen("notice").ids.preview.trigger_action(0)
        assert screen("notice").pages

    @step
    def issue_refused_until_acknowledged():
        yield from shot("08-notice-preview")
        s = screen("notice")
        assert any(w.text.startswith("MEMORY") for w in s.ids.rows_list.children), "no memory row listed"
        assert "acknowledge before issue" in s.ack_text, s.ack_text
        s.ids.issued_by.text = "Priya Okonkwo-Lind, P.Eng."
        s.ids.issue.trigger_action(0)
        assert "acknowledge the" in s.message, s.message
        assert not app.store.notices(app.site_id)

    @step
    def acknowledge_memory_rows():
        s = screen("notice")
        s.ids.acknowledge.trigger_action(0)
        assert "acknowledged by Priya Okonkwo-Lind" in s.ack_text, s.ack_text

    @step
    def issue():
        yield from shot("08b-notice-acknowledged")  # the frame after the tap
        s = screen("notice")
        s.ids.issue.trigger_action(0)
        assert " issued, " in s.message, s.message
        (notice,) = app.store.notices(app.site_id)
        assert notice.memory_acknowledgement.by == "Priya Okonkwo-Lind, P.Eng."
        assert "SHA-256 " in s.ids.issued.children[-1].text
        assert notice.pdf_sha256[:12] not in s.ids.issued.children[-1].text  # the footer's hash, not the file's

    @step
    def export_notice():
        s = screen("notice")
        s.ids.export_dir.text = str(OUT / "exported")
        s.ids.issued.children[-1].trigger_action(0)
        assert list((OUT / "exported").glob("*.pdf")), s.message
        yield from shot("09-notice-issued")

    @step
    def closeout():
        s = screen("notice")
        s.ids.acknowledge.trigger_action(0)  # the open items' memory rows, acknowledged again for this document
        s.ids.closeout.trigger_action(0)
        assert s.message.startswith("Close-out "), s.message
        assert any(n.change_note == "close-out notice" for n in app.store.notices(app.site_id))

    @step
    def closeout_shot():
        yield from shot("09b-closeout-issued")

    @step
    def to_sync():
        screen("notice").ids.back.trigger_action(0)
        screen("site").ids.sync.trigger_action(0)
        s = screen("sync")
        s.ids.export_dir.text = str(OUT / "sync")
        s.ids.export.trigger_action(0)

    @step
    def sync_wait():
        s = screen("sync")
        if s.busy:
            msg = "export still running"
            raise TimeoutError(msg)  # the runner retries a few times
        assert "Wrote" in s.summary, s.summary
        assert list((OUT / "sync").glob("*.bwsync"))
        yield from shot("10-sync")

    @step
    def dim_theme():
        screen("sync").ids.back.trigger_action(0)
        app.go("sites")
        screen("sites").ids.theme_toggle.trigger_action(0)

    @step
    def dim_shot():
        yield from shot("11-sites-dim")
        app.open_site(app.site_id)
        app.open_beam(demo_beam("RB-5"))

    @step
    def dim_beam():
        yield from shot("12-beam-dim")

    @step
    def create_site():
        app.go("sites")
        s = screen("sites")
        s.ids.new_name.text = "Willow Yard Pavilion"
        s.ids.new_address.text = "7 Quarry Lane"
        s.ids.new_contractor.text = "Ashgrove Framing Inc."
        s.ids.new_contractor_contact.text = "M. Ferreira"
        s.ids.new_engineer_of_record.text = "R. Lindqvist, P.Eng."
        s.ids.new_dead_kpa.text = "1.0"
        s.ids.new_snow_kpa.text = "heavy"  # refused at the field: not a number
        s.ids.create_site.trigger_action(0)
        assert app.root.current == "sites", s.error_text
        assert "snow load" in s.error_text, s.error_text  # in words, not the stored field's name
        assert "snow_kpa" not in s.error_text, s.error_text
        s.ids.new_snow_kpa.text = "2.4"
        s.ids.create_site.trigger_action(0)
        assert app.root.current == "site"
        assert "Willow Yard" in screen("site").title
        assert app.store.site(app.site_id).contractor_contact == "M. Ferreira"
        assert app.store.site(app.site_id).engineer_of_record == "R. Lindqvist, P.Eng."

    @step
    def archive_by_mistake():
        app.open_site(next(x.id for x in app.store.sites() if "Cedar" in x.name))
        rb9 = demo_beam("RB-9")
        app.open_beam(rb9)
        screen("beam").ids.archive.trigger_action(0)
        screen("beam").ids.archive.trigger_action(0)  # the second tap confirms
        assert app.root.current == "site"
        assert "RB-9" not in [r["mark"] for _, r in app.store.beams(app.site_id)]
        assert app.store.beam_record(rb9)["mark"] == "RB-9"  # kept, with its history

    @step
    def touch_targets():
        # field use: every control at least 15 mm tall (Kivy's mm unit follows the screen's dpi)
        from kivy.metrics import mm
        from kivy.uix.button import Button
        from kivy.uix.textinput import TextInput

        small = []
        for name in ("sites", "site", "beam", "deficiency", "notice", "sync"):
            for w in app.root.get_screen(name).walk(restrict=True):
                if isinstance(w, Button | TextInput) and not w.disabled and w.opacity > 0 and w.height < mm(15) - 1:
                    small.append(f"{name}: {type(w).__name__} {getattr(w, 'text', '')[:30]!r} {w.height:.0f}px")
        assert not small, small

elif FLOW == "hub":
    import atexit
    import subprocess
    import time as _time

    from mobile.viewmodels.sync import reachable

    HUB_URL, HUB_CODE = os.environ["BRACEWALK_TEST_HUB_URL"], os.environ["BRACEWALK_TEST_HUB_CODE"]
    GEOM = os.environ.get("BRACEWALK_GEOMETRY", "default")
    seen_sync = {"at": None}
    hub_seen: dict[str, list[str]] = {}  # what the sync screen said, step by step
    restarted = []  # the hub this flow starts again after cutting the network; stopped when the flow ends

    def _stop_restarted():
        for proc in restarted:
            proc.terminate()
            proc.wait(timeout=20)

    atexit.register(_stop_restarted)

    def wait_for_background_sync(what):
        """Retried by the runner (TimeoutError) until a background sync has finished since the last look."""
        bg = app.background
        if bg.busy or bg.finished_at_s is None or bg.finished_at_s == seen_sync["at"]:
            msg = f"waiting for the background sync ({what})"
            raise TimeoutError(msg)
        seen_sync["at"] = bg.finished_at_s
        return bg.summary

    def hub_digest():
        out = subprocess.run(
            [sys.executable, "-m", "mobile.cli", "hub", "digest", "--db", os.environ["BRACEWALK_TEST_HUB_DB"]],
            capture_output=True,
            text=True,
            timeout=60,
            check=True,
        )
        return out.stdout.strip().splitlines()[-1]

    REAL_SITE = "Alder Yard roof (a real job)"

    def real_site():
        """A job of the reviewer's own: the demo site never leaves the tablet, so its edits are not synced."""
        demo = next(x for x in app.store.sites() if "Cedar" in x.name)
        site = app.store.create_site(**demo.model_dump(exclude={"id", "demo"}) | {"name": REAL_SITE})
        for beam_id, record in app.store.beams(demo.id):
            if record["mark"] in ("RB-1", "RB-2"):
                location = {k: record[k] for k in ("mark", "level", "gridline") if k in record}
                copied = app.store.save_beam(site.id, app.store.beam(beam_id), location)
        # one open deficiency on the real job (the hub's verify rule is exercised on it later)
        app.store.raise_deficiency(
            site.id,
            copied,
            "bearing_restraint_missing",
            "immediate",
            "Roof, RB-2, support 1",
            "no restraint against lateral displacement at the bearing",
            "CSA O86-19 7.5.6.3.1",
            "install the bearing restraint",
        )
        return site.id

    @step
    def first_frame():
        real_site()
        app.go("sync")

    @step
    def not_enrolled():
        s = screen("sync")
        assert "Not enrolled" in s.hub_text, s.hub_text
        assert s.ids.sync_now.disabled  # nothing to sync with yet
        assert s.ids.enroll.height > 0, _enrol_form(s)
        assert s.ids.enrol_again.height == 0, _enrol_form(s)
        yield from shot(f"{GEOM}-hub-1-not-enrolled")
        said = hub_seen["summaries"] = []
        s.bind(summary=lambda _w, text: said.append(text))  # the enrolment's line, before the sync replaces it
        s.ids.hub_url.text = HUB_URL
        s.ids.enrol_code.text = HUB_CODE
        s.ids.enroll.trigger_action(0)

    @step
    def enrolled_and_first_sync():
        summary = wait_for_background_sync("first sync after enrolment")
        s = screen("sync")
        assert any(t.startswith("Enrolled as Tablet 7 for ") for t in hub_seen["summaries"]), hub_seen["summaries"]
        assert summary.startswith("Sent "), summary
        assert f"as device {app.store.device_id}." in s.enrolled_text, s.enrolled_text
        assert "in step at" in s.hub_text, s.hub_text
        assert s.ids.enrol_code.text == ""  # the one-time code is spent
        # enrolled: the form is folded away (0 high, no touch) behind "Enrol again", which unfolds it
        assert "enrolled at" in s.enrolled_text, _enrol_form(s)
        assert s.ids.enroll.height == 0, _enrol_form(s)
        assert s.ids.enroll.disabled, _enrol_form(s)
        assert s.ids.enrol_again.height > 0, _enrol_form(s)
        assert not s.ids.enrol_again.disabled, _enrol_form(s)
        check_layout("sync")
        yield from shot(f"{GEOM}-hub-2-enrolled")
        s.ids.enrol_again.trigger_action(0)
        assert s.ids.enroll.height > 0, _enrol_form(s)
        assert not s.ids.enroll.disabled, _enrol_form(s)
        assert s.ids.enrol_again.height == 0, _enrol_form(s)
        yield from shot(f"{GEOM}-hub-2a-enrol-again")  # waits for the frame that lays the form out again
        check_layout("sync")
        s.enrol_open = False
        # log a change on a beam and leave: nobody taps "Sync now"
        app.open_site(next(x.id for x in app.store.sites() if x.name == REAL_SITE))
        app.open_beam(demo_beam("RB-1"))
        type_into("notes", "hanger at S1 re-nailed, seen 09:10")
        screen("beam").leave()
        assert app.store.pending_sync_count("hub") > 0

    @step
    def synced_without_a_tap():
        summary = wait_for_background_sync("the logged change")
        assert app.root.current == "site"  # the reviewer never went to the Sync screen
        assert summary.startswith("Sent "), summary
        assert app.store.pending_sync_count("hub") == 0
        mine, office = app.store.digest(include_demo=False), hub_digest()
        print(f"DIGESTS {mine} {office}", flush=True)
        assert mine == office, (mine, office)
        # the network goes: the hub stops; the reviewer goes on working
        os.kill(int(os.environ["BRACEWALK_TEST_HUB_PID"]), signal.SIGTERM)
        for _ in range(100):  # bounded: 10 s for the port to close
            if not reachable(HUB_URL, 0.2):
                break
            _time.sleep(0.1)
        app.open_beam(demo_beam("RB-2"))
        type_into("notes", "purlin clip missing at grid 4, logged offline")
        screen("beam").leave()

    @step
    def offline_work_is_kept():
        summary = wait_for_background_sync("an attempt with the hub gone")
        assert summary.startswith("Not synced, your work is safe"), summary
        assert app.background.auto.failing
        assert app.store.pending_sync_count("hub") > 0
        assert app.root.current == "site"  # the form was never held up
        app.go("sync")

    @step
    def offline_shown():
        s = screen("sync")
        assert "could not be reached" in s.hub_text, s.hub_text
        assert "waiting for the office. Kept here; it is sent by itself" in s.waiting_text, s.waiting_text
        check_layout("sync")
        yield from shot(f"{GEOM}-hub-2b-offline")
        # the network returns: the same hub, on the same port
        port = HUB_URL.rsplit(":", 1)[1]
        cmd = [sys.executable, "-m", "mobile.cli", "hub", "serve", "--db", os.environ["BRACEWALK_TEST_HUB_DB"]]
        restarted.append(subprocess.Popen([*cmd, "--port", port], stdout=subprocess.DEVNULL))
        app.go("sites")

    @step
    def back_without_a_tap():
        summary = wait_for_background_sync("the hub is back")
        if not summary.startswith("Sent "):  # an attempt while the hub was still starting; the probe goes on
            msg = f"not yet back: {summary}"
            raise TimeoutError(msg)
        print("HUB-BACK", flush=True)
        assert app.store.pending_sync_count("hub") == 0
        mine, office = app.store.digest(include_demo=False), hub_digest()
        print(f"DIGESTS {mine} {office}", flush=True)
        assert mine == office, (mine, office)
        # a technician's tablet claims to verify: the hub refuses and quarantines it
        d = app.store.deficiencies(app.site_id, open_only=True)[0]
        app.store.move_status(d.id, "corrected", "T. Tech", "contractor")
        app.store.move_status(d.id, "verified", "T. Tech", "reviewer")
        app.go("sync")

    @step
    def held_back_in_words():
        summary = wait_for_background_sync("the verification")
        s = screen("sync")
        assert "held back 1" in summary, summary
        assert "only a reviewer verifies" in s.held_text, s.held_text
        assert "some changes held back" in s.hub_text, s.hub_text
        assert _time.strftime("%Z") in s.hub_text or "UTC" in s.hub_text, s.hub_text  # local time with its zone
        check_layout("sync")
        yield from shot(f"{GEOM}-hub-3-held-back")

elif FLOW == "layout":
    GEOM = os.environ.get("BRACEWALK_GEOMETRY", "default")
    seen = []

    def look(name):
        yield from shot(f"{GEOM}-{name}")
        seen.extend(layout_problems(app.root.current))

    @step
    def first_frame():
        # after the first frame the app froze its start-up heap (mobile.app.freeze_start_heap); collector on
        if gc.get_freeze_count() == 0:
            raise TimeoutError  # no frame drawn yet: the runner retries
        assert gc.isenabled()

    @step
    def sites_layout():
        yield from look("1-sites")
        app.open_site(next(s.id for s in app.store.sites() if "Cedar" in s.name))

    @step
    def site_layout():
        yield from look("2-site")
        s = screen("site")
        # the unraised-findings band at its longest (its most beams named): nothing overlapped, nothing cut
        from mobile.viewmodels.site import UNRAISED_BAND_NAMED

        marks = ", ".join(f"RB-{i} (2 findings)" for i in range(UNRAISED_BAND_NAMED))
        head = "▲ Findings not yet raised on 35 beams (not on any notice; tap to read all)"
        s.unraised_text = f"{head}: {marks} and 31 more"
        yield from look("2a-site-unraised")
        band = s.ids.unraised
        if band.height < band.texture_size[1]:
            seen.append(f"site: the unraised band {band.height:.0f} px high for {band.texture_size[1]:.0f} px of text")
        s.open_unraised()
        yield from look("2a-site-unraised-full")
        seen.extend(f"site unraised: {p}" for p in popup_problems())
        s._close()
        s.unraised_text = s.vm.unraised_warning(tap=True)
        immediate = [d for d in app.store.deficiencies(app.site_id, open_only=True) if d.priority == "immediate"]
        if s.wide:
            seen.extend(deficiency_list_problems(s.ids.deficiency_list, immediate))
            app.open_beam(demo_beam("RB-5"))
            return
        # portrait: the deficiencies are folded behind a button that says how many, and how many IMMEDIATE
        total = len(app.store.deficiencies(app.site_id, open_only=True))
        if f"({total})" not in s.ids.fold.text or f"IMMEDIATE: {len(immediate)}" not in s.ids.fold.text:
            seen.append(f"site: the folded deficiencies' button without their counts: {s.ids.fold.text!r}")
        s.ids.fold.trigger_action(0)
        yield from look("2b-site-deficiencies")
        seen.extend(f"site fold: {p}" for p in popup_problems())
        seen.extend(deficiency_list_problems(s.fold.ids.fold_list, immediate))
        s.fold.ids.cancel.trigger_action(0)
        app.open_beam(demo_beam("RB-5"))

    @step
    def beam_layout():
        yield from look("3-beam")
        screen("beam").ids.form_scroll.scroll_y = 0.5

    @step
    def beam_layout_lower():
        yield from look("3b-beam-lower")
        screen("beam").leave()
        screen("site").ids.new_beam.trigger_action(0)

    @step
    def new_beam_layout():
        yield from look("3c-beam-new")  # nothing entered yet: the panel lists what the recheck needs
        assert screen("beam").vm.result is None
        assert "span" in screen("beam").vm.recheck_error
        screen("beam").leave()
        app.open_beam(demo_beam("RB-5"))  # a demo beam with a photo
        app.go("photo")

    @step
    def photo_layout():
        assert screen("photo").source, "the demo beam's photo is not shown"
        yield from look("3d-photo")
        app.open_deficiency(app.store.deficiencies(app.site_id, open_only=True)[0].id)

    @step
    def deficiency_layout():
        yield from look("4-deficiency")
        app.go("notice")

    @step
    def notice_layout():
        yield from look("5-notice")
        # a bundle held until this app was updated, now readable: its line and the Apply button are laid out too
        with app.store.db.conn:
            app.store.db.execute("INSERT INTO held_bundle VALUES (?, ?, ?)", ["ab" * 32, 1, str(OUT / "held.zip")])
        app.go("sync")

    @step
    def sync_layout():
        assert screen("sync").ids.apply_held.opacity == 1
        yield from look("6-sync")
        print(f"WINDOW {app.root_window.size}", flush=True)
        assert not seen, "\n".join(seen[:25]) + (f"\n... {len(seen)} in all" if len(seen) > 25 else "")

elif FLOW == "beam-geometry":
    # The beam screen at a tablet's real dpi and density (test_ui_beam.py sets KIVY_DPI, KIVY_METRICS_DENSITY and
    # the window): a beam that passes (RB-1), a deficient one with its IMMEDIATE banner (RB-3), one whose bending
    # capacity is not established (RB-5); each opened after the one before was scrolled to the end of its panel.
    GEOM = os.environ.get("BRACEWALK_GEOMETRY", "default")
    DPI = float(os.environ["KIVY_DPI"])
    seen = []

    def beam_look(name):
        yield from shot(f"{GEOM}-{name}")
        s = screen("beam")
        seen.extend(f"{name}: {p}" for p in layout_problems("beam") + beam_problems(s, DPI))
        print(f"MEASURE {name}: {beam_measures(s, DPI)}", flush=True)

    def opened_at_the_top(mark):
        """The panel of the beam just opened starts at its top, its status card whole in view."""
        s = screen("beam")
        assert s.vm.record()["mark"] == mark, s.vm.record()["mark"]
        panel = s.ids.panel.parent
        if panel.scroll_y < 0.999 or _shown(s._status) != _window_rect(s._status):
            seen.append(f"{mark}: the panel opened at scroll_y {panel.scroll_y:.2f}, the status card not whole in view")

    def leave_at_the_end():
        """Scroll the panel to the end of this beam's findings and go back to the site (its list)."""
        s = screen("beam")
        s.ids.panel.parent.scroll_y = 0
        s.ids.back.trigger_action(0)

    @step
    def first_frame():
        if gc.get_freeze_count() == 0:
            raise TimeoutError  # no frame drawn yet: the runner retries
        app.open_site(next(s.id for s in app.store.sites() if "Cedar" in s.name))

    @step
    def open_passing():
        app.open_beam(demo_beam("RB-1"))

    @step
    def passing():
        s = screen("beam")
        assert s.vm.status() == "ok", s.vm.status()
        assert not s.immediate_text, s.immediate_text
        if "system" in s.fields and _in_tree(s, s.fields["system"]):
            seen.append("RB-1 (glulam, KH 1.0 only) shows the sawn members' system picker")
        yield from beam_look("1-rb1-pass")
        s.ids.form_scroll.scroll_to(s.ids.bearings, animate=False)

    @step
    def passing_bearings():
        yield from beam_look("1b-rb1-bearings")
        leave_at_the_end()

    @step
    def open_deficient():
        app.open_beam(demo_beam("RB-3"))

    @step
    def deficient():
        s = screen("beam")
        assert s.vm.status() == "deficient", s.vm.status()
        assert s.immediate_text.startswith("▲ IMMEDIATE"), s.immediate_text
        opened_at_the_top("RB-3")
        yield from beam_look("2-rb3-deficient")
        banner = s.ids.immediate
        if not hasattr(banner, "folded"):
            seen.append("RB-3: the IMMEDIATE banner cannot be folded or unfolded")
            return
        banner.trigger_action(0)  # a tap: every IMMEDIATE finding with its action
        yield from beam_look("2b-rb3-banner-whole")
        whole = s.vm.immediate_findings()[0]
        if whole not in banner.text.replace("\n", " "):
            seen.append(f"RB-3: the unfolded banner does not hold the finding: {banner.text[:80]!r}")
        banner.trigger_action(0)
        s.ids.caution.trigger_action(0)  # the caution, folded beside the banner, read whole
        yield from beam_look("2c-rb3-caution-whole")
        if s.ids.caution.text != app.caution:
            seen.append(f"RB-3: the caution unfolded reads {s.ids.caution.text[:60]!r}")
        s.ids.caution.trigger_action(0)

    @step
    def many_immediate_findings():
        # the session-34 review's case (GL-2): several IMMEDIATE findings of several lines each; opened, the banner
        # pushed the top bar (back, title, undo) and its first findings off the top and ran under the recheck's heading
        s = screen("beam")
        s.restraint_buttons[(2, "rotation", "no")].trigger_action(0)
        type_into("tributary_m", "4")
        for i in (1, 2):
            w = s.length_inputs[i]
            w.focus = True
            w.text = "40"
            w.focus = False
        found = s.vm.immediate_findings()
        assert len(found) >= 4, found
        assert "no restraint against rotation" in found[0], found[0]  # the one that matters most, first
        s.ids.immediate.trigger_action(0)  # a tap opens it

    @step
    def many_immediate_opened():
        s = screen("beam")
        yield from beam_look("2d-rb3-many-findings-open")
        banner = s.ids.immediate
        if banner.height <= BANNER_OPEN_MAX * app.root_window.height:
            seen.append("RB-3: the opened banner fits unscrolled: not the review's case (the test needs more text)")
        if s.vm.immediate_findings()[0] not in banner.text.replace("\n", " "):
            seen.append(f"RB-3: the opened banner does not hold the first finding: {banner.text[:80]!r}")
        if hasattr(banner.parent, "scroll_y"):
            banner.parent.scroll_y = 0  # to its end

    @step
    def many_immediate_end():
        s = screen("beam")
        yield from beam_look("2e-rb3-many-findings-end")
        seen.extend(f"RB-3: {p}" for p in banner_end_problems(s))
        s.ids.immediate.trigger_action(0)  # folded again

    @step
    def to_not_established():
        leave_at_the_end()

    @step
    def open_not_established():
        app.open_beam(demo_beam("RB-5"))

    @step
    def not_established():
        s = screen("beam")
        assert s.vm.status() == "not_established", s.vm.status()
        opened_at_the_top("RB-5")
        yield from beam_look("3-rb5-not-established")
        options = [w for w in s.ids.panel.walk(restrict=True) if getattr(w, "text", "").startswith("Options for")]
        if not options:
            seen.append("RB-5: no 'Options for the engineer of record' line")
            return
        options[0].trigger_action(0)

    @step
    def options_in_words():
        # the options popup names what each option answers in words: a stored finding code read
        # "bearing_restraint_missing: restrain the bearing(s)..." (field review)
        from kivy.uix.modalview import ModalView

        from core.kinds import FindingCode

        yield from shot(f"{GEOM}-3a-rb5-options")
        views = [w for w in app.root_window.children if isinstance(w, ModalView)]
        if views:
            text = " ".join(getattr(w, "text", "") for w in views[0].walk(restrict=True))
            codes = [c.value for c in FindingCode if c.value in text]
            if codes:
                seen.append(f"RB-5 options popup shows stored codes {codes}")
            seen.extend(f"RB-5 options popup: {p}" for p in popup_problems() + cut_text_problems(views[0]))
            views[0].dismiss()
        screen("beam").ids.panel.parent.scroll_y = 0

    @step
    def raised_readable():
        yield from beam_look("3b-rb5-raised")
        s = screen("beam")
        raised = [w for w in s.ids.panel.children if "raised as D-" in getattr(w, "text", "") and w.disabled]
        assert raised, "RB-5 shows no raised finding"
        for w in raised:
            if _shown(w) is None:
                seen.append(f"RB-5: {w.text!r} not in view at the end of the panel")
                continue
            ratio = drawn_contrast(OUT / f"{GEOM}-3b-rb5-raised.png", w)
            print(f"MEASURE raised button contrast {ratio:.1f}:1", flush=True)
            if ratio < 7:
                seen.append(f"RB-5: {w.text!r} drawn at a contrast of {ratio:.1f}:1 (< 7:1)")
        leave_at_the_end()

    @step
    def open_sawn():
        app.open_beam(demo_beam("FJ-1"))

    @step
    def sawn_lengths_typed():
        # the session-34 review's joist typed in inches: 1 1/2" x 9 1/4" showed "38.1 r" and "5 mm" in landscape;
        # each length field gets a value of six digits as the form shows it ("234.95 mm", "388.938 mm")
        s = screen("beam")
        assert s.vm.record()["material"] == "sawn", s.vm.record()["material"]
        typed = {
            "b_mm": ('1 1/2"', "38.1 mm"),
            "d_mm": ('9 1/4"', "234.95 mm"),
            "spans": ("14' 6 5/16\"", "4427.54 mm"),
            "overhang_left_mm": ("1' 3 5/16\"", "388.938 mm"),
            "bottom_spacing_mm": ('23 7/16"', "595.312 mm"),
        }
        for name, (text, shown) in typed.items():
            type_into(name, text)
            got = field(name).text
            if s.vm.errors.get(name) or got != shown:
                seen.append(f"FJ-1 {name}: {text!r} shows {got!r} ({s.vm.errors.get(name, 'no message')})")
        w = s.length_inputs[1]
        w.focus = True
        w.text = '3 1/16"'  # 77.7875 mm
        w.focus = False
        s.ids.form_scroll.scroll_to(s.fields["d_mm"], animate=False)  # width and depth in view

    @step
    def sawn_size_fields():
        s = screen("beam")
        yield from beam_look("4-fj1-size-fields")
        s.ids.form_scroll.scroll_to(s.fields["overhang_left_mm"], animate=False)

    @step
    def sawn_span_fields():
        yield from beam_look("4b-fj1-span-fields")
        # the joists are at 16" on centre: their tributary width typed on the field's keypad, which offers ' and "
        # (refused before as "tributary_m = '16\"': enter a number"); then a bare 400, which is no width in m
        s = screen("beam")
        popup = s.fields["tributary_m"].open_keypad()
        for key in ("C", "1", "6", '"'):
            next(b for b in popup.content.children[1].children if b.text == key).trigger_action(0)
        popup.dismiss()  # a tap outside enters it
        width = s.vm.record().get("tributary_m")
        if s.vm.errors.get("tributary_m") or width is None or abs(width - 0.4064) > 1e-9:
            seen.append(f'FJ-1 tributary width 16": stored {width!r}, message {s.vm.errors.get("tributary_m")!r}')
        if not s.fields["tributary_m"].echo.startswith("= 0.4064 m = 1' 4\""):
            seen.append(f'FJ-1 tributary width 16": echoed {s.fields["tributary_m"].echo!r}')
        type_into("tributary_m", "400")

    @step
    def sawn_tributary_refused():
        s = screen("beam")
        tf = s.fields["tributary_m"]
        s.ids.form_scroll.scroll_to(tf.ids.suggest, animate=False)  # the question laid out: its button in view
        yield from beam_look("4c-fj1-tributary-asked")
        if "tributary_m" in tf.error or not tf.error.startswith("tributary width:"):
            seen.append(f"FJ-1 tributary width 400: the message {tf.error!r} is not in the field's words")
        if not tf.error.endswith("Did you mean 400 mm?") or _shown(tf.ids.suggest) != _window_rect(tf.ids.suggest):
            seen.append(f"FJ-1 tributary width 400: no question, or its button not in view: {tf.error!r}")
        tf.ids.suggest.trigger_action(0)  # "Use 400 mm"
        if abs((s.vm.record().get("tributary_m") or 0) - 0.4) > 1e-9:
            seen.append(f"FJ-1 tributary width: 'Use 400 mm' stored {s.vm.record().get('tributary_m')!r}")
        # a sawn member's system (KH: single member, load-sharing, sheathed light-frame); not recorded, the recheck
        # takes a single member, and the form says so
        pf = s.fields.get("system")
        if pf is None or not _in_tree(s, pf):
            seen.append("FJ-1: no picker for the system (single member, load-sharing, light-frame) on a sawn member")
            return
        if pf.ids.input.text != SYSTEM_DEFAULT:
            seen.append(f"FJ-1: the system picker shows {pf.ids.input.text!r}, not {SYSTEM_DEFAULT!r}")
        s.ids.form_scroll.scroll_to(pf, animate=False)
        pf.ids.input.is_open = True  # its choices, each whole

    @step
    def sawn_system_choices():
        s = screen("beam")
        if "system" not in s.fields:
            return
        spinner = s.fields["system"].ids.input
        yield from beam_look("4d-fj1-system-choices")
        options = [w for w in spinner._dropdown.container.children if getattr(w, "text", "")]
        for w in options:
            w.texture_update()
            tw, th = w.texture_size
            if tw > w.width + 2 or th > w.height + 2 or w.height < DPI / 25.4 * 15 - 1:
                seen.append(
                    f"FJ-1 system choice {w.text!r}: text {tw:.0f}x{th:.0f} px in {w.width:.0f}x{w.height:.0f} px"
                )
        spinner.is_open = False
        spinner.text = "Load-sharing system"  # picked: saved at once
        rec = s.vm.record()
        if (rec.get("system"), rec.get("system_recorded")) != ("shared", True):
            seen.append(f"FJ-1: load-sharing picked, stored {rec.get('system')!r} {rec.get('system_recorded')!r}")
        s.ids.back.trigger_action(0)

    @step
    def reopen_sawn():
        app.open_beam(demo_beam("FJ-1"))

    @step
    def sawn_system_kept():
        s = screen("beam")
        if "system" not in s.fields:
            return
        pf = s.fields["system"]
        if pf.ids.input.text != "Load-sharing system":
            seen.append(f"FJ-1 opened again: the system picker shows {pf.ids.input.text!r}")
        s.ids.form_scroll.scroll_to(pf, animate=False)

    @step
    def sawn_system_kept_shot():
        yield from beam_look("4e-fj1-system-load-sharing")

    @step
    def two_spans_and_a_long_note():
        # the field review's entries: a two-span beam typed in feet-inches ("4427.54 mm; 3744.91 mm" shown) and a
        # note of 2,000 characters; each drawn whole (typed_value_problems holds the note too since then)
        type_into("spans", "14' 6 5/16\"; 12' 3 7/16\"")
        if field("spans").text != "4427.54 mm; 3744.91 mm":
            seen.append(f"FJ-1 two spans show {field('spans').text!r} ({screen('beam').vm.errors.get('spans')})")
        type_into("notes", LONG_NOTE)
        if field("notes").text != LONG_NOTE:
            seen.append(f"FJ-1 note of {len(LONG_NOTE)} characters shows {len(field('notes').text)}")

    @step
    def to_the_spans():  # once the note has grown the form (scrolled in the same tick, the form moved after)
        screen("beam").ids.form_scroll.scroll_to(screen("beam").fields["spans"], animate=False)

    @step
    def two_spans_shown():
        yield from beam_look("4f-fj1-two-spans")
        s = screen("beam")
        s.ids.form_scroll.scroll_to(s.fields["notes"], animate=False)

    @step
    def long_note_shown():
        yield from beam_look("4g-fj1-long-note")
        note = field("notes")
        print(f"MEASURE long note: {len(note.text)} characters on {len(note._lines)} lines", flush=True)
        # four spans (a continuous purlin over five supports), typed as bare mm: shown "7200 mm; ...; 4800 mm",
        # which ran past the field's right edge at every review geometry (two spans were drawn whole)
        type_into("spans", FOUR_SPANS[0])
        if field("spans").text != FOUR_SPANS[1]:
            seen.append(f"FJ-1 four spans show {field('spans').text!r} ({screen('beam').vm.errors.get('spans')})")

    @step
    def to_the_four_spans():
        screen("beam").ids.form_scroll.scroll_to(screen("beam").fields["spans"], animate=False)

    @step
    def four_spans_shown():
        yield from beam_look("4h-fj1-four-spans")
        echo = screen("beam").fields["spans"].ids.echo  # each span's mm and feet-inches on one line
        lines = [line.strip() for line in drawn_lines(echo)]
        if any(not line.endswith(";") for line in lines[:-1]):
            seen.append(f"FJ-1 four spans: the echo breaks inside a span: {' / '.join(lines)!r}")
        screen("beam").fields["spans"].open_keypad()

    @step
    def keypad_keys():
        # the keypad over the four spans: every key at least 15 mm both ways at the real dpi (the app's own rule
        # for its targets; 13.2 mm high in landscape before), no label cut, the entry shown whole above the keys
        from kivy.uix.button import Button
        from kivy.uix.gridlayout import GridLayout

        s = screen("beam")
        yield from shot(f"{GEOM}-4i-fj1-keypad")
        popup = s.fields["spans"].keypad_popup
        grid = next(w for w in popup.content.walk(restrict=True) if isinstance(w, GridLayout))
        keys = [b for b in grid.children if isinstance(b, Button)]
        mm = DPI / 25.4
        heights = sorted({round(b.height / mm, 1) for b in keys})
        widths = sorted({round(b.width / mm, 1) for b in keys})
        cut = [b.text for b in keys if b.texture_size[0] > b.width or b.texture_size[1] > b.height]
        print(f"MEASURE keypad: {len(keys)} keys, {heights} mm high, {widths} mm wide; labels cut: {cut}", flush=True)
        if len(keys) != KEYPAD_KEY_COUNT:
            seen.append(f"keypad: {len(keys)} keys found, not {KEYPAD_KEY_COUNT}")
        small = [b.text for b in keys if b.height < 15 * mm - 1 or b.width < 15 * mm - 1]
        if small:
            seen.append(f"keypad keys under 15 mm ({heights} mm high, {widths} mm wide): {small}")
        if cut:
            seen.append(f"keypad labels cut: {cut}")
        seen.extend(f"keypad: {p}" for p in popup_problems() + cut_text_problems(popup.content))
        entry = s.fields["spans"].keypad_shown
        if entry.text.replace("\u00a0", " ") != FOUR_SPANS[1] or mid_word_break(entry):  # no-break inside a span
            seen.append(f"keypad: the entry {entry.text!r} shows as {drawn_lines(entry)!r}")
        popup.dismiss()

    @step
    def verdict():
        print(f"WINDOW {app.root_window.size}", flush=True)
        assert not seen, "\n".join(seen[:30]) + (f"\n... {len(seen)} in all" if len(seen) > 30 else "")

elif FLOW == "notice-layout":
    # the notice screen at a tablet geometry of the session-32 review (its real KIVY_DPI and density): nothing
    # overlaps, spills or breaks a word; the items and the table rows each show 3 rows whole; the page shown is
    # 60 mm tall at the real dpi and opens full width. Every problem is collected, then all are reported.
    from kivy.metrics import Metrics

    GEOM = os.environ.get("BRACEWALK_GEOMETRY", "default")
    PX_PER_MM = Metrics.dpi / 25.4  # KIVY_DPI: the screen's real dpi
    found = []

    def notice_problems(where):
        """The layout rules on the screen and on what is open over it, words broken, the page overlapped."""
        from kivy.uix.label import Label

        roots = [screen("notice")] + [w for w in app.root_window.children if w is not app.root]
        problems = [p for root in roots for p in widget_problems(root) + cut_text_problems(root)]
        ids = screen("notice").ids  # the typed fields draw their whole text: the export folder and the issuer
        problems += [p for w in (ids.export_dir, ids.issued_by) if _drawn(w) for p in field_cut(w, w is ids.export_dir)]
        page = screen("notice").ids.get("page")
        page_rect = _shown(page) if page is not None else None
        for root in roots:
            for w in root.walk(restrict=True):
                if not isinstance(w, Label) or not w.text.strip() or _shown(w) is None:
                    continue
                what = f"{type(w).__name__} {w.text[:32]!r}"
                if broken := mid_word_break(w):
                    problems.append(f"{what} breaks a word: {broken}")
                r = _shown(w)
                across = page_rect and min(r[2], page_rect[2]) - max(r[0], page_rect[0]) > 2
                if across and min(r[3], page_rect[3]) - max(r[1], page_rect[1]) > 2:
                    problems.append(f"{what} overlaps the page preview")
        return [f"{where}: {p}" for p in problems]

    def look_through(name):
        """Screenshots and the rules at the page's top, middle and bottom (the whole page when it scrolls)."""
        page = screen("notice").ids.get("page_scroll")
        for y in (1, 0.5, 0) if page is not None else (1,):
            if page is not None:
                page.scroll_y = y
                page.update_from_scroll()
            yield from shot(f"{GEOM}-{name}-{int(y * 100)}")
            found.extend(notice_problems(f"{name} at scroll {y}"))

    def bring(widget):
        """Scroll the page so ``widget`` is in view (when the page scrolls)."""
        page = screen("notice").ids.get("page_scroll")
        if page is not None:
            page.scroll_to(widget, padding=0, animate=False)
            page.update_from_scroll()

    def whole_rows(box):
        """Rows of a list drawn whole on screen (inside every scrolled window around them), each with its text."""
        whole = 0
        for w in box.children:
            shown, full = _shown(w), _window_rect(w)
            if shown is not None and w.text and all(abs(a - b) <= 1 for a, b in zip(shown, full, strict=True)):
                whole += 1
        return whole

    def page_mm(image):
        """The height (mm, at the real dpi) of the page drawn by ``image`` that is on screen."""
        shown = _shown(image)
        if shown is None or not image.texture:
            return 0.0
        y = image.to_window(image.center_x, image.center_y)[1]
        h = image.norm_image_size[1]
        return max(0.0, min(shown[3], y + h / 2) - max(shown[1], y - h / 2)) / PX_PER_MM

    @step
    def first_frame():
        if gc.get_freeze_count() == 0:
            raise TimeoutError  # no frame drawn yet: the runner retries
        from core.records import ReviewerProfile

        app.site_id = next(s.id for s in app.store.sites() if "Cedar" in s.name)
        # the device's signer, without phone or email (the screen warns of it): 'issued by' is filled with the name
        app.store.set_reviewer_profile(ReviewerProfile(name="Priya Okonkwo-Lind, P.Eng."))
        app.go("notice")  # straight from the sites list: the test needs no other screen

    @step
    def fresh():
        yield from look_through("n1-fresh")

    @step
    def items_shown():
        s = screen("notice")
        bring(s.ids.get("item_scroll", s.ids.item_list))
        yield from shot(f"{GEOM}-n2-items")
        n = whole_rows(s.ids.item_list)
        print(f"ITEM-ROWS {n} of {len(s.ids.item_list.children)}", flush=True)
        if n < 3:
            found.append(f"the items list shows {n} rows whole (3 wanted)")

    @step
    def memory_rows_shown():
        s = screen("notice")
        bring(s.ids.get("rows_scroll", s.ids.rows_list))
        yield from shot(f"{GEOM}-n3-memory-rows")
        n = whole_rows(s.ids.rows_list)
        print(f"MEMORY-ROWS {n} of {len(s.ids.rows_list.children)}", flush=True)
        if n < 3:
            found.append(f"the table rows list shows {n} rows whole (3 wanted)")
        s.ids.preview.trigger_action(0)

    @step
    def preview_shown():
        s = screen("notice")
        assert s.pages, "no page rendered"
        bring(s.ids.page)
        yield from shot(f"{GEOM}-n4-preview")
        height = page_mm(s.ids.page)
        print(f"PREVIEW-MM {height:.1f}", flush=True)
        if height < 60:
            found.append(f"the page preview is {height:.1f} mm tall on screen (60 wanted)")
        found.extend(notice_problems("preview"))
        if "enlarge" not in s.ids:
            found.append("no action opens the page full size")
            return
        s.ids.enlarge.trigger_action(0)

    @step
    def full_size():
        from kivy.uix.modalview import ModalView

        views = [w for w in app.root_window.children if isinstance(w, ModalView)]
        if not views:
            found.append("'Read full size' opened nothing")
            return
        yield from shot(f"{GEOM}-n5-full-size")
        full = views[0].children[0]
        image = full.ids.full_page
        width = image.norm_image_size[0] / PX_PER_MM
        print(f"FULL-WIDTH-MM {width:.1f} PAGE-TEXT {full.ids.full_label.text!r}", flush=True)
        if width < 120:  # a Letter or A4 page (216, 210 mm) at 55 % of its size or more: its 9 pt text readable
            found.append(f"the page opened full size is {width:.1f} mm wide (120 wanted)")
        found.extend(notice_problems("full size"))
        full.ids.full_next.trigger_action(0)
        if "page 2 of" not in full.ids.full_label.text:
            found.append(f"the full-size page did not turn: {full.ids.full_label.text!r}")
        full.ids.full_close.trigger_action(0)

    @step
    def tap_the_page():
        from kivy.uix.modalview import ModalView

        s = screen("notice")
        if any(isinstance(w, ModalView) for w in app.root_window.children):
            found.append("Close left the full-size page open")
        if not hasattr(s.ids.page, "trigger_action"):
            found.append("a tap on the page does nothing")
            return
        s.ids.page.trigger_action(0)  # a tap on the page opens it too
        yield from shot(f"{GEOM}-n6-page-tapped")
        views = [w for w in app.root_window.children if isinstance(w, ModalView)]
        if not views:
            found.append("a tap on the page opened nothing")
            return
        views[0].dismiss()

    @step
    def refused_then_issued():
        s = screen("notice")
        if s.ids.issued_by.text != "Priya Okonkwo-Lind, P.Eng.":
            found.append(f"'issued by' not filled with the device's signer: {s.ids.issued_by.text!r}")
            s.ids.issued_by.text = "Priya Okonkwo-Lind, P.Eng."
        s.ids.issue.trigger_action(0)
        assert "acknowledge the" in s.message, s.message
        yield from shot(f"{GEOM}-n7-refused")
        found.extend(notice_problems("refused"))
        s.ids.acknowledge.trigger_action(0)
        assert "acknowledged by Priya" in s.ack_text, s.ack_text
        s.ids.issue.trigger_action(0)
        assert len(app.store.notices(app.site_id)) == 1, s.message

    @step
    def issued():
        yield from look_through("n8-issued")
        message = screen("notice").ids.message  # the page is at its bottom: the message is still in view
        if _shown(message) != _window_rect(message):
            found.append("the 'Issued' message is not wholly on screen")
        s = screen("notice")
        (notice,) = app.store.notices(app.site_id)
        count = f"{len(notice.deficiency_ids)} items"
        written = next((Path(app.store.path).parent / "notices").glob("notice-*.pdf"))
        for what in (notice.number, count, str(written)):  # which notice, how many items, where its PDF is
            if what not in s.message:
                found.append(f"the 'Issued' message does not say {what!r}: {s.message!r}")
        if notice.number not in s.ids.issue.text or count not in s.ids.issue.text:
            found.append(f"the Issue button does not show what was issued: {s.ids.issue.text!r}")
        s.ids.acknowledge.trigger_action(0)
        s.vm.issue(s.ids.issued_by.text, Path(app.store.path).parent / "notices")  # a second tap on Issue
        s.message = s.vm.message
        if len(app.store.notices(app.site_id)) != 1:
            found.append("a second tap on Issue issued the same items again")
        bring(s.ids.issue)
        yield from shot(f"{GEOM}-n8b-issued-again")
        found.extend(notice_problems("a second tap on Issue"))
        print(f"WINDOW {app.root_window.size}", flush=True)
        s = screen("notice")
        s.ids.acknowledge.trigger_action(0)  # the open items' memory rows, for the close-out
        s.ids.closeout.trigger_action(0)
        assert any(n.change_note == "close-out notice" for n in app.store.notices(app.site_id)), s.message

    @step
    def closeout_issued():
        s = screen("notice")
        bring(s.ids.page_label)  # its longest line: 'ISSUED close-out, page 1 of N'
        yield from shot(f"{GEOM}-n9-closeout")
        if "close-out" not in s.page_text:
            found.append(f"the close-out's pages are not shown: {s.page_text!r}")
        found.extend(notice_problems("close-out"))
        for problem in found:
            print(f"NOTICE-PROBLEM {problem}", flush=True)
        assert not found, f"{len(found)} problems on the notice screen (NOTICE-PROBLEM lines)"

elif FLOW == "portrait":

    @step
    def first_frame():
        app.open_site(app.store.sites()[0].id)

    @step
    def site_portrait():
        assert app.root_window.height > app.root_window.width
        assert screen("site").wide is False  # the columns follow the screen's shape: stacked in portrait
        problems = layout_problems("site")
        assert not problems, problems  # nothing cut, overlapping or off screen
        yield from shot("13-site-portrait")
        app.open_beam(demo_beam("RB-5"))

    @step
    def beam_portrait():
        problems = layout_problems("beam")
        assert not problems, problems
        yield from shot("14-beam-portrait")

elif FLOW == "site-rows":
    # how many beam rows a reviewer sees at once on a long site (session-25 review: 2.5 rows at 1280x800
    # with density 1.5, 1.5 in portrait, under fixed-height controls); BRACEWALK_MIN_ROWS from the test
    GEOM = os.environ.get("BRACEWALK_GEOMETRY", "default")

    def whole_rows_in_view():
        """Beam rows wholly inside the list's window (the RecycleView's own rectangle), each with its text."""
        rv = screen("site").ids.beam_list
        view = _window_rect(rv)
        rows = []
        for w in rv.layout_manager.children:
            if not getattr(w, "beam_id", ""):
                continue
            r = _window_rect(w)
            if r[1] >= view[1] - 1 and r[3] <= view[3] + 1 and w.opacity == 1 and w.text:
                rows.append(w.text)
        return rows

    @step
    def many_beams():
        demo = next(x for x in app.store.sites() if "Cedar" in x.name)
        site = app.store.create_site(**demo.model_dump(exclude={"id", "demo"}) | {"name": "Row count yard"})
        one = next(i for i, r in app.store.beams(demo.id) if r["mark"] == "RB-1")
        for level in ("L2", "L10"):
            for n in range(20):
                app.store.save_beam(site.id, app.store.beam(one), {"mark": f"{level}-B{n}", "level": level})
        app.open_site(site.id)

    @step
    def count_rows():
        yield from shot(f"{GEOM}-site-rows")
        rows = whole_rows_in_view()
        print(f"BEAM-ROWS {len(rows)} {rows[:1]}", flush=True)
        problems = layout_problems("site")
        assert not problems, "\n".join(problems[:12])
        headings = [d["text"] for d in screen("site").ids.beam_list.data if d["viewclass"] == "BeamHeading"]
        assert headings == ["Level: L2", "Level: L10"], headings  # natural order (L10 came first, as text)
        wanted = int(os.environ["BRACEWALK_MIN_ROWS"])
        assert len(rows) >= wanted, f"{len(rows)} beam rows wholly in view, want at least {wanted}"

    @step
    def longest_filters():
        # the filters share their row with the search and "+ Log a beam": each choice still fits its box
        s = screen("site")
        seen = []
        for value in s.ids.status_filter.values:
            s.ids.status_filter.text = value
            s.ids.status_filter.texture_update()
            seen += layout_problems("site")
        s.ids.level_filter.text = "level not recorded"
        yield from shot(f"{GEOM}-site-rows-filters")
        seen += layout_problems("site")
        assert not seen, "\n".join(seen[:12])
        s.ids.caution.trigger_action(0)  # the short caution band: a tap shows the whole caution

    @step
    def whole_caution():
        from kivy.uix.modalview import ModalView

        yield from shot(f"{GEOM}-site-rows-caution")
        (view,) = [w for w in app.root_window.children if isinstance(w, ModalView)]
        texts = [getattr(w, "text", "") for w in view.walk(restrict=True)]
        assert app.caution in texts, texts
        problems = popup_problems()
        assert not problems, "\n".join(problems[:12])
        view.dismiss()


elif FLOW == "site-rechecking":
    # a site whose stored results are all stale (after a table correction: 2-4 s for 10,000 beams) is rechecked in a
    # worker thread: the screen says how far it is and keeps drawing (it was frozen until the recheck was done)
    import time

    from mobile.viewmodels.site import RECHECK_PART
    from storage import results as stored_results

    STALE = 2 * RECHECK_PART + 200  # three parts
    seen = {"flips": 0, "texts": set()}

    def recheck_work():
        return screen("site")._recheck if app.root.current == "site" else None

    @step
    def many_stale():
        demo = next(x for x in app.store.sites() if "Cedar" in x.name)
        site = app.store.create_site(**demo.model_dump(exclude={"id", "demo"}) | {"name": "Stale yard"})
        beam = app.store.beam(next(i for i, r in app.store.beams(demo.id) if r["mark"] == "RB-1"))
        for n in range(STALE):
            app.store.save_beam(site.id, beam, {"mark": f"S-{n}", "level": "L1"})
        assert stored_results.stale_count(app.store.db, site.id) == STALE  # a new beam's result starts stale
        seen["site"] = site.id

    @step
    def open_stale():
        def flipped(*_):
            work = recheck_work()
            if work is None or not work.running():
                if app.root.current == "site" and screen("site")._loading:
                    seen["texts"].add(screen("site").ids.counts.text)  # a failed worker's line, drawn
                return
            seen["flips"] += 1  # a frame drawn while the worker rechecks
            text = screen("site").ids.counts.text
            if text not in seen["texts"] and f"{RECHECK_PART:,} done" in text:
                written = app.root_window.screenshot(str(OUT / "site-rechecking.png"))  # this frame, drawn
                Path(written).replace(OUT / "site-rechecking.png")
            seen["texts"].add(text)

        app.root_window.bind(on_flip=flipped)
        real = stored_results.refresh_parts

        def parts(db, site_id, part=None):
            # after each stored part the worker waits (5 s at most) until a frame has shown how far it is, so
            # what is checked below does not depend on how fast this machine rechecks
            for done, total in real(db, site_id, part):
                yield done, total  # the worker now says it is this far
                deadline = time.monotonic() + 5
                while not any(f"{done:,} done" in t for t in seen["texts"]) and time.monotonic() < deadline:
                    time.sleep(0.02)

        seen["real"] = real
        stored_results.refresh_parts = parts
        app.open_site(seen["site"])

    @step
    def listed_after_the_work():
        if recheck_work() is not None or screen("site")._loading:
            raise TimeoutError  # still rechecking: the runner tries again
        print(f"RECHECK-FRAMES {seen['flips']} texts {sorted(seen['texts'])}", flush=True)
        said = f"Rechecking {STALE:,} beams (their stored results are out of date)…"
        for done in (RECHECK_PART, 2 * RECHECK_PART, STALE):
            assert f"{said}  {done:,} done" in seen["texts"], f"{done} done never shown: {sorted(seen['texts'])}"
        assert seen["flips"] >= 3, f"{seen['flips']} frames drawn during the recheck"
        yield from shot("site-after-recheck")
        counts = screen("site").counts_text
        assert counts.startswith(f"{STALE:,} beams:"), counts
        assert stored_results.stale_count(app.store.db, seen["site"]) == 0

    @step
    def back_to_sites():
        app.go("sites")

    def all_stale_and_held_after_the_first_part():
        """Every result of the site stale again; the next worker waits after its first part for ``seen["hold"]``."""
        import threading

        app.store.db.execute("UPDATE beam_result SET input_hash = '' WHERE site_id = ?", [seen["site"]])
        hold = seen["hold"] = threading.Event()
        real = seen["real"]

        def parts(db, site_id, part=None):
            for k, step_done in enumerate(real(db, site_id, part)):
                yield step_done
                if k == 0:
                    hold.wait(10)  # after its first part, until the step that sets it (10 s at most)

        stored_results.refresh_parts = parts

    @step
    def leave_while_rechecking():
        # every result stale again; the reviewer taps back to the sites while the worker is on its first part
        all_stale_and_held_after_the_first_part()
        app.open_site(seen["site"])
        seen["worker"] = recheck_work()
        assert seen["worker"] is not None
        app.go("sites")
        assert stored_results.stale_count(app.store.db, seen["site"]) > 0  # left before the first part was stored

    @step
    def back_while_it_runs():
        # back on the site while the same worker runs: it is followed, not started again, and the line says how
        # far it is of all it is rechecking (it said "Rechecking 700 beams... 500 done" before: the review's find)
        work = seen["worker"]
        if work.done < RECHECK_PART:
            raise TimeoutError  # the first part is not stored yet: the runner tries again
        assert app.root.current == "sites", app.root.current
        assert stored_results.stale_count(app.store.db, seen["site"]) == STALE - RECHECK_PART
        app.open_site(seen["site"])
        assert screen("site")._recheck is work
        said = screen("site").counts_text
        want = f"Rechecking {STALE:,} beams (their stored results are out of date)…  {RECHECK_PART:,} done"
        assert said == want, said
        app.go("sites")  # and off again: it goes on by itself
        stored_results.refresh_parts = seen["real"]
        seen["hold"].set()

    @step
    def finished_in_the_background():
        work = screen("site")._recheck
        if work is not None:
            raise TimeoutError  # the worker goes on after the screen is left; what it stores is kept
        assert app.root.current == "sites", app.root.current
        assert stored_results.stale_count(app.store.db, seen["site"]) == 0
        app.open_site(seen["site"])  # nothing stale: listed at once, no worker
        assert screen("site")._recheck is None
        assert not screen("site")._loading
        yield from shot("site-reopened")
        counts = screen("site").counts_text
        assert counts.startswith(f"{STALE:,} beams:"), counts

    @step
    def edit_while_it_runs():
        # every result stale again; the worker is held after its first part while a beam it has already stored is
        # edited (a sync's pull, or the reviewer's own save): that beam's stored result is then the worker's, from
        # before the edit, so it must be rechecked again before the list shows it
        app.go("sites")
        all_stale_and_held_after_the_first_part()
        app.open_site(seen["site"])
        seen["worker"] = recheck_work()
        assert seen["worker"] is not None

    @step
    def save_an_edit_the_worker_has_passed():
        work = seen["worker"]
        if work.done < RECHECK_PART:
            raise TimeoutError  # the first part is not stored yet: the runner tries again
        done_ids = [
            r[0]
            for r in app.store.db.execute(
                "SELECT beam_id FROM beam_result WHERE site_id = ? AND input_hash != '' ORDER BY beam_id LIMIT 1",
                [seen["site"]],
            )
        ]
        assert done_ids, "the worker's first part stored no result"
        beam_id = seen["edited"] = done_ids[0]
        before = dict((i, st) for i, _, st in stored_results.site_list(app.store.db, seen["site"]))[beam_id]
        assert before == "ok", before  # the demo's RB-1: a 130x456 glulam roof beam that passes
        # a 20 m span for the same glulam under the demo's snow: the moment demand grows with the span's square
        # (wL²/8, a handbook formula), Mr falls only a little (through KZbg, O86 7.5.6.5), so it cannot pass
        app.store.update_beam(beam_id, {"spans_mm": [20000]})
        assert stored_results.stale_count(app.store.db, seen["site"]) == STALE - RECHECK_PART + 1
        stored_results.refresh_parts = seen["real"]
        seen["hold"].set()

    @step
    def the_list_shows_the_edit():
        if recheck_work() is not None or screen("site")._loading:
            raise TimeoutError  # still rechecking: the runner tries again
        assert stored_results.stale_count(app.store.db, seen["site"]) == 0
        status = {i: st for i, _, st in screen("site")._rows}[seen["edited"]]
        assert status == "deficient", status

    @step
    def a_failed_recheck_says_why():
        # the worker fails after its first part (a locked or damaged database): the screen says so and why, then
        # rechecks what is left itself, and keeps a line saying it did (before, it only paused, unexplained)
        import sqlite3
        import threading

        app.go("sites")
        app.store.db.execute("UPDATE beam_result SET input_hash = '' WHERE site_id = ?", [seen["site"]])
        real = seen["real"]

        def parts(db, site_id, part=None):
            for k, step_done in enumerate(real(db, site_id, part)):
                yield step_done
                if k == 0 and threading.current_thread().name == "bracewalk-recheck":  # the worker, not the screen
                    deadline = time.monotonic() + 5  # until a frame has shown the first part (5 s at most)
                    while not any(f"{RECHECK_PART:,} done" in t for t in seen["texts"]) and time.monotonic() < deadline:
                        time.sleep(0.02)
                    msg = "disk I/O error"
                    raise sqlite3.OperationalError(msg)

        seen["texts"].clear()
        stored_results.refresh_parts = parts
        app.open_site(seen["site"])

    @step
    def the_failure_is_shown_then_the_list():
        if screen("site")._loading:
            raise TimeoutError  # the worker or the screen's own recheck is under way: the runner tries again
        stored_results.refresh_parts = seen["real"]
        left = STALE - RECHECK_PART
        said = (
            "The background recheck stopped (the tablet's database could not be read: disk I/O error). "
            f"Rechecking the {left:,} beams it"
        )
        assert any(t.startswith(said) for t in seen["texts"]), sorted(seen["texts"])
        counts = screen("site").counts_text
        assert counts.startswith(f"{STALE:,} beams:"), counts
        note = (
            "The background recheck stopped (the tablet's database could not be read: disk I/O error); this screen "
            "rechecked the rest, so"
        )
        assert note in counts, counts
        assert stored_results.stale_count(app.store.db, seen["site"]) == 0
        yield from shot("site-recheck-failed")


elif FLOW == "site-layout-once":
    # the first open of a site places the beam list's rows once, at the list's real width (it placed
    # them three times: once about 34 px wide, before the screen had its size; once more when the list's
    # height followed the rows; once at the real width)
    widths = []

    @step
    def open_site_counting():
        layout = screen("site").ids.beam_list.layout_manager
        place = layout.compute_layout

        def counted(data, flags):
            if data:  # the empty list at start costs nothing
                widths.append(round(layout.width))
            return place(data, flags)

        layout.compute_layout = counted  # this instance only
        app.open_site(next(s.id for s in app.store.sites() if "Cedar" in s.name))
        yield from shot("site-layout-once")

    @step
    def placed_once():
        layout = screen("site").ids.beam_list.layout_manager
        print(f"LAYOUTS {widths} final width {round(layout.width)}", flush=True)
        assert widths == [round(layout.width)], f"rows placed at widths {widths}; the list is {layout.width:.0f} px"
        rows = [w for w in layout.children if getattr(w, "beam_id", "")]
        assert rows, f"the beam list shows no beam: {[type(w).__name__ for w in layout.children]}"

elif FLOW == "site-after-sync":
    # a sync that finishes while the site screen is shown redraws the rows whose results it changed (they kept
    # the status from before the sync: found in the session-25 review)
    from core.recheck import recheck
    from mobile.viewmodels.common import status_label
    from storage import Store

    seen = {}

    def row_text(beam_id):
        return next(d["text"] for d in screen("site").ids.beam_list.data if d.get("beam_id") == beam_id)

    @step
    def open_site():
        app.open_site(next(s.id for s in app.store.sites() if "Cedar" in s.name))
        seen["id"] = demo_beam("RB-1")
        yield from shot("site-before-sync")
        seen["before"] = row_text(seen["id"])
        assert seen["before"].startswith(status_label("ok")), seen["before"]

    @step
    def pulled_edit():
        other = Store(app.store.path)  # the sync worker writes through its own connection
        other.update_beam(seen["id"], {"d_mm": 152})  # a far shallower member than logged
        seen["expect"] = status_label(recheck(other.beam(seen["id"])).status.value)
        other.close()
        assert seen["expect"] != seen["before"].split("      ")[0], seen["expect"]
        real = app.background.poll

        def finished_once(_now_s):
            app.background.poll = real
            return True  # a background sync has just finished

        app.background.poll = finished_once

    @step
    def row_follows():
        if "finished_once" in getattr(app.background.poll, "__name__", ""):
            raise TimeoutError  # the app's timer has not polled yet: the runner tries again
        yield from shot("site-after-sync")
        now = row_text(seen["id"])
        print(f"ROW before {seen['before']!r} after {now!r}", flush=True)
        assert now.startswith(seen["expect"]), f"after the sync the row shows {now!r}; its recheck: {seen['expect']}"
        warning = screen("site").unraised_text
        print(f"UNRAISED {warning!r}", flush=True)
        assert "RB-1 (" in warning, warning  # its new findings are not on any notice yet

    @step
    def unraised_in_full():
        # the band shows the warning's first lines (it was cut to one); a tap shows the whole warning
        band = screen("site").ids.unraised
        assert "tap to read all" in band.text, band.text
        assert band.texture_size[1] > band.font_size * 1.5, "the band shows one line only"
        band.dispatch("on_release")
        yield from shot("site-unraised-full")
        full = screen("site").unraised_full.ids.unraised_full.text
        assert full.startswith("▲ Findings not yet raised on "), full
        assert "RB-1 (" in full, full
        problems = popup_problems()
        assert not problems, problems
        screen("site")._close()

elif FLOW == "shot-current":
    # a screenshot shows the state the step left, not the frame before it (the sync screen's lag)

    def corner_grey(path):
        """The grey level of the window's background at the right edge, halfway down (0 black, 255 white)."""
        from PIL import Image

        with Image.open(path) as im:
            return im.convert("L").getpixel((im.width - 3, im.height // 2))

    @step
    def to_sync():
        app.go("sync")

    @step
    def change_then_shoot():
        app.set_theme("dim")  # the whole background turns from white (sun) to near black in this tick
        yield from shot("shot-current")
        grey = corner_grey(OUT / "shot-current.png")
        print(f"SHOT-GREY {grey}", flush=True)
        assert grey < 60, f"the screenshot shows the sun theme (grey {grey}), the frame before the change"

elif FLOW == "defsite-geometry":
    # The site list, the sites screen and a deficiency at a tablet's real dpi and density (test_ui_defsite.py sets
    # KIVY_DPI, KIVY_METRICS_DENSITY and the window): every text whole (labels, pickers, fields and their hints),
    # nothing overlapping, the beam list at least BRACEWALK_MIN_ROWS whole rows, and the deficiency with the
    # longest required action shown whole in its fields (the session-32 review read "Make safe now: snov").
    GEOM = os.environ.get("BRACEWALK_GEOMETRY", "default")
    DPI = float(os.environ["KIVY_DPI"])
    MIN_ROWS = int(os.environ["BRACEWALK_MIN_ROWS"])
    MIN_DEFICIENCY_ROWS = 4  # landscape: the open deficiencies beside the beams
    seen = []

    def label_cut(w):
        """A label (or button, picker) whose lines leave out part of its text, or are larger than its box."""
        what = f"{type(w).__name__} {w.text[:40]!r}"
        lines = drawn_lines(w)
        found = []
        if "".join("".join(lines).split()) != "".join(w.text.split()):
            found.append(f"{what} shows only {' / '.join(line.strip() for line in lines)[:90]!r}")
        tw, th = w.texture_size
        if tw > w.width + 2 or th > w.height + 2:
            found.append(f"{what}: its text {tw:.0f}x{th:.0f} px spills out of its {w.width:.0f}x{w.height:.0f} px box")
        return found

    def whole_text_problems(root):
        """Every shown label, button, picker and text field under ``root``: its text whole (label_cut, field_cut)."""
        from kivy.uix.label import Label
        from kivy.uix.textinput import TextInput

        found = []
        for w in root.walk(restrict=True):
            if not isinstance(w, Label | TextInput) or _shown(w) is None:
                continue
            if isinstance(w, TextInput):
                found += field_cut(w)
            elif w.text.strip() and not w.markup:
                found += label_cut(w)
        return found

    def open_popup_content():
        from kivy.uix.modalview import ModalView

        (view,) = [w for w in app.root_window.children if isinstance(w, ModalView)]
        return view, view.content

    def whole_beam_rows():
        """Beam rows wholly inside the list's window (the RecycleView's rectangle), each with its text."""
        rv = screen("site").ids.beam_list
        view = _window_rect(rv)
        rows = []
        for w in rv.layout_manager.children:
            r = _window_rect(w)
            if getattr(w, "beam_id", "") and r[1] >= view[1] - 1 and r[3] <= view[3] + 1 and w.text:
                rows.append(w.text)
        return rows

    def counts_problems(label):
        """A status's count and words broken across two lines of the counts ('■ 1 NOT' / 'PERMITTED')."""
        lines = [" ".join(line.split()) for line in drawn_lines(label)]
        first = label.text.split("\n")[0]
        parts = [" ".join(p.split()) for p in first.split(":", 1)[-1].split("·")]
        split = [p for p in parts if not any(p in x for x in lines)]
        return [f"counts: {p!r} split across lines: {' / '.join(lines)}" for p in split]

    def check(name, problems):
        seen.extend(f"{GEOM} {name}: {p}" for p in problems)

    def pane_of(w):
        """The ScrollView that holds ``w`` (its pane)."""
        from kivy.uix.scrollview import ScrollView

        node = w.parent
        while not isinstance(node, ScrollView):
            node = node.parent
        return node

    @step
    def first_frame():
        if gc.get_freeze_count() == 0:
            raise TimeoutError  # no frame drawn yet: the runner retries
        assert app.root.current == "sites", app.root.current

    @step
    def sites_top():
        yield from shot(f"{GEOM}-1-sites")
        check(
            "sites", layout_problems("sites") + whole_text_problems(screen("sites")) + caution_problems(screen("sites"))
        )
        form = screen("sites").ids.new_name.parent.parent.parent  # the form's ScrollView
        form.scroll_y = 0  # the lower fields: contractor contact, notice copies, load bases and their hints

    @step
    def sites_form_end():
        yield from shot(f"{GEOM}-1b-sites-form-end")
        check("sites form end", layout_problems("sites") + whole_text_problems(screen("sites")))
        app.open_site(next(s.id for s in app.store.sites() if "Cedar" in s.name))

    @step
    def site():
        yield from shot(f"{GEOM}-2-site")
        s = screen("site")
        site = app.store.site(app.site_id)
        problems = (
            layout_problems("site") + whole_text_problems(s) + counts_problems(s.ids.counts) + caution_problems(s)
        )
        if site.name not in s.ids.title.text or site.address not in s.ids.title.text:
            problems.append(f"the title {s.ids.title.text!r} without the site's name and address")
        rows = whole_beam_rows()
        if len(rows) < MIN_ROWS:
            problems.append(f"{len(rows)} beam rows wholly in view, want at least {MIN_ROWS}")
        check("site", problems)
        mm = DPI / 25.4
        print(f"MEASURE site: {len(rows)} whole beam rows; list {s.ids.beam_list.height / mm:.0f} mm high", flush=True)
        if s.wide:
            view = _shown(s.ids.deficiency_scroll)
            print(f"MEASURE site: open deficiencies {(view[3] - view[1]) / mm:.0f} mm in view", flush=True)
            immediate = [d for d in app.store.deficiencies(app.site_id, open_only=True) if d.priority == "immediate"]
            check("site", deficiency_list_problems(s.ids.deficiency_list, immediate))
            # several open deficiencies in view at once, each whole (about one and a third showed at 1280x800)
            whole = [
                b for b in s.ids.deficiency_list.children if b.text.startswith("D-") and _shown(b) == _window_rect(b)
            ]
            print(f"MEASURE site: {len(whole)} whole open-deficiency rows in view", flush=True)
            if len(whole) < MIN_DEFICIENCY_ROWS:
                check("site", [f"{len(whole)} open-deficiency rows wholly in view, want {MIN_DEFICIENCY_ROWS}"])
        else:
            s.ids.fold.trigger_action(0)

    @step
    def folded_deficiencies():
        s = screen("site")
        if s.wide:
            return
        yield from shot(f"{GEOM}-2b-site-deficiencies")
        _view, form = open_popup_content()
        check("site fold", popup_problems() + whole_text_problems(form))
        s.fold.ids.cancel.trigger_action(0)

    def uncaptioned(ids, names, png):
        """Fields with no name above them, or a name in view drawn under 4.5:1 contrast in the screenshot ``png``.

        A hint alone goes once the field holds text; 4.5:1 is WCAG 2 AA for text. Kivy lists children last first.
        """
        out = []
        for name in names:
            w = ids[name]
            siblings = w.parent.children
            above = siblings[siblings.index(w) + 1] if siblings.index(w) + 1 < len(siblings) else None
            if not (type(above).__name__ == "FieldCaption" and above.text.strip()):
                out.append(f"{name}: no name above the field")
            elif _shown(above) is not None and (ratio := drawn_contrast(png, above)) < 4.5:  # those in view
                out.append(f"{name}: its name {above.text!r} drawn at {ratio:.1f}:1 contrast")
        return out

    @step
    def visit_form_named():
        s = screen("site")
        s.ids.visit.trigger_action(0)
        ids = s.visit_form.ids
        ids.visit_reviewer.text = "Priya Okonkwo-Lind, P.Eng."
        yield from shot(f"{GEOM}-2d-site-visit-form")
        _view, form = open_popup_content()
        names = ("visit_reviewer", "visit_weather", "visit_scope", "visit_not_scope")
        named = uncaptioned(ids, names, OUT / f"{GEOM}-2d-site-visit-form.png")
        check("visit form", popup_problems() + whole_text_problems(form) + named)
        ids.visit_reviewer.text = ""
        s._close()

    @step
    def raise_by_hand_form():
        s = screen("site")
        s.open_hand()
        longest = max(app.store.deficiencies(app.site_id, open_only=True), key=lambda d: len(d.action))
        ids = s.hand_form.ids
        ids.hand_location.text, ids.hand_description.text = longest.location, longest.description
        ids.hand_action.text = longest.action
        yield from shot(f"{GEOM}-2c-site-raise-by-hand")
        _view, form = open_popup_content()
        fields = ("hand_location", "hand_description", "hand_action", "hand_priority")
        named = uncaptioned(ids, fields, OUT / f"{GEOM}-2c-site-raise-by-hand.png")
        check("raise by hand", popup_problems() + whole_text_problems(form) + named)
        for k in ("hand_location", "hand_description", "hand_action"):
            ids[k].text = ""
        s._close()

    @step
    def open_longest_deficiency():
        longest = max(app.store.deficiencies(app.site_id, open_only=True), key=lambda d: len(d.action))
        assert len(longest.action) > 200, longest.action  # the demo's long required action, the review's case
        app.open_deficiency(longest.id)

    @step
    def deficiency():
        s = screen("deficiency")
        yield from shot(f"{GEOM}-3-deficiency")
        d = app.store.deficiency(app.deficiency_id)
        problems = layout_problems("deficiency") + whole_text_problems(s) + caution_problems(s)
        for name in ("location", "description", "action", "reference"):
            w, stored = s.ids[name], getattr(d, name)
            if w.text != stored:
                problems.append(f"{name}: the field holds {w.text[:40]!r}, the record {stored[:40]!r}")
            problems += [f"{name}: {p}" for p in field_cut(w)]
            pane = pane_of(w)
            if w.height > pane.height + 1:
                problems.append(f"{name}: {w.height:.0f} px high in a pane {pane.height:.0f} px high: never seen whole")
        check("deficiency", problems)
        for name in ("location", "description", "action", "reference", "priority", "due"):
            w = s.ids[name]
            pane_of(w).scroll_to(w, animate=False)
            yield 2
            if _shown(w) != _window_rect(w):
                check("deficiency", [f"{name} scrolled to is not whole in view: {_shown(w)} of {_window_rect(w)}"])
            check("deficiency form", whole_text_problems(s))
        yield from shot(f"{GEOM}-3b-deficiency-form-end")
        pane_of(s.ids.note).scroll_y = 0

    @step
    def deficiency_status_end():
        s = screen("deficiency")
        yield from shot(f"{GEOM}-3c-deficiency-status-end")
        check("deficiency status end", layout_problems("deficiency") + whole_text_problems(s))
        # Enter in a wrapping field leaves it and saves it, as in a one-line field (no line break typed into it)
        w = s.ids.reference
        w.focus = True
        w.text += " (seen on site)"
        w.keyboard_on_key_down(app.root_window, (13, "enter"), "\r", [])
        stored = app.store.deficiency(app.deficiency_id).reference
        if w.focus or "\n" in w.text or not stored.endswith("(seen on site)"):
            check("deficiency", [f"Enter in Reference: focus {w.focus}, text {w.text!r}, stored {stored!r}"])

    @step
    def verdict():
        print(f"WINDOW {app.root_window.size}", flush=True)
        found = list(dict.fromkeys(seen))  # a text cut at every scroll position of its pane is said once
        assert not found, "\n".join(found[:30]) + (f"\n... {len(found)} in all" if len(found) > 30 else "")

elif FLOW == "type-then-kill":

    @step
    def open_beam():
        app.open_site(app.store.sites()[0].id)
        app.open_beam(demo_beam("RB-1"))

    @step
    def type_note():
        field("notes").text = KILL_NOTE  # typed, not entered: the pause autosave must catch it

    @step
    def pause():
        pass  # the autosave runs TYPING_PAUSE_S after the last keystroke

    @step
    def kill():
        print("KILLING", flush=True)
        os.kill(os.getpid(), signal.SIGKILL)

elif FLOW == "relaunch":

    @step
    def open_beam():
        app.open_site(app.store.sites()[0].id)
        app.open_beam(demo_beam("RB-1"))

    @step
    def show():
        print(f"NOTES={field('notes').text}", flush=True)


@step
def done():
    print(f"FRAME-WAITS {state['frame_waits']}", flush=True)  # screenshots taken after waiting for their frame
    print("UI-OK", flush=True)
    app.stop()


def run_next(_dt):
    fn = steps[state["i"]]
    advance(fn, None)


def advance(fn, gen):
    """Run step ``fn`` (or resume its generator ``gen`` after the frames it waited for) to its end or next wait."""
    try:
        if gen is None:
            gen = fn()
        if inspect.isgenerator(gen):
            frames = next(gen)  # runs the step until it waits for frames (a screenshot) or ends
            after_frames(frames, lambda: advance(fn, gen))
            return
    except StopIteration:
        pass
    except TimeoutError:
        state.setdefault("retries", 0)
        state["retries"] += 1
        if state["retries"] < 120:  # 30 s
            Clock.schedule_once(run_next, 0.25)
            return
        print(f"UI-FAIL at {fn.__name__}: timed out", flush=True)
        app.stop()
        return
    except Exception as exc:  # report, then stop the app so the test sees the failure
        print(f"UI-FAIL at {fn.__name__}: {exc!r}", flush=True)
        app.stop()
        return
    state["i"] += 1
    state["retries"] = 0  # each step gets its own budget of retries
    if state["i"] < len(steps):
        Clock.schedule_once(run_next, 0.5)


Clock.schedule_once(run_next, 1.0)
app.run()
print(f"FROZEN-AFTER-STOP {gc.get_freeze_count()}", flush=True)  # on_stop gave the start-up heap back
