"""The site screen (site.kv): beams found by mark / level / status with counts, open deficiencies, the visit.

The beam list takes most of the height: a level's heading is a thin band, and the caution band is short
(a tap shows it whole). In landscape only the back button, the search and filters and the counts are
above the list; the title (wrapped whole), the site's buttons, the visit, the unraised warning, the open
deficiencies (most urgent first) with "+ Log a beam" and "Raise a deficiency by hand…" have the right-hand
column. In portrait the site's buttons, the title and the search and filters (with "+ Log a beam") are
above the list, the visit and the deficiencies under it, folded behind a button with their count (and
the IMMEDIATE count), opened over the screen. ``SiteScreen.arrange`` moves the pieces between the two.
The visit and raise-by-hand forms open over the screen too.
"""

from __future__ import annotations

from types import SimpleNamespace
from typing import Any

from kivy.app import App
from kivy.clock import Clock
from kivy.factory import Factory
from kivy.metrics import dp, mm
from kivy.properties import BooleanProperty, StringProperty
from kivy.uix.button import Button
from kivy.uix.label import Label
from kivy.uix.layout import Layout
from kivy.uix.popup import Popup
from kivy.uix.recyclelayout import RecycleLayout
from kivy.uix.screenmanager import Screen
from kivy.uix.scrollview import ScrollView

from core.results import PRIORITY_ORDER
from mobile.screens.widgets import big_button, status_colour
from mobile.viewmodels import SiteViewModel
from mobile.viewmodels.common import PRIORITY_LABELS, STATUS_WORDS, status_label
from mobile.viewmodels.site import CAUTION_SHORT, PINNED, RECHECK_NOTICE_AT, BackgroundRecheck

ALL_LEVELS, ALL_STATUSES = "all levels", "all statuses"
RECHECK_FOLLOW_S = 0.2  # how often the screen shows the background recheck's progress
HEADING_MM = 7  # a level's heading in the beam list: a thin band, not a target (site.kv BeamHeading)


class BeamRow(Button):
    """One beam of the recycling list (RecycleView): only the rows on screen exist as widgets."""

    beam_id = StringProperty("")

    def on_release(self) -> None:
        """Open this beam's form."""
        App.get_running_app().open_beam(self.beam_id)


def list_data(groups: list[tuple[str, list[tuple[str, str, str]]]], statuses: dict[str, str]) -> list[dict[str, Any]]:
    """The recycling list's rows: a heading per level (and the pinned group), then its beams.

    ``statuses`` maps each beam id to its status value (the colour follows the value, not the label).
    """
    data: list[dict[str, Any]] = []
    for where, rows in groups:
        data.append(heading_row(where if where == PINNED else f"Level: {where}"))
        data += [
            {
                "viewclass": "BeamRow",
                "beam_id": beam_id,
                "text": f"{label}      {name}",
                "background_color": status_colour(statuses[beam_id]),
            }
            for beam_id, name, label in rows
        ]
    return data


def heading_row(text: str) -> dict[str, Any]:
    """A heading of the recycling list: a thin band (HEADING_MM) between the 15 mm beam rows."""
    return {"viewclass": "BeamHeading", "text": text, "height": mm(HEADING_MM)}


def lay_out_now(screen: Screen, size: Any) -> None:
    """Give the screen ``size`` and lay its widgets out at once, each parent before its children.

    Kivy sizes a screen when it is shown and lays it out over the next frame, level by level: the beam
    list got its rows while still at its default size (~34 px wide at first, from the screen's 100 px)
    and placed all of them there, then again at its real width. Laid out first, it places them once.
    The recycling layout itself is skipped: its rows are placed by the list, from the data.
    """
    screen.size = size
    for widget in screen.walk(restrict=True):
        if isinstance(widget, RecycleLayout):
            continue
        if isinstance(widget, Layout):
            widget.do_layout()
        elif isinstance(widget, ScrollView):
            widget.update_from_scroll()  # sizes its content (the list's layout) from its own size


def place(box: Any, widgets: list[Any]) -> None:
    """Make ``widgets`` the children of ``box``, in this order (top to bottom, left to right).

    Each is taken from wherever it is; what ``box`` held before and is not listed is taken out of it.
    """
    for w in list(box.children):
        if w not in widgets:
            box.remove_widget(w)
    for w in widgets:
        if w.parent is not None:
            w.parent.remove_widget(w)
        box.add_widget(w)


def presize(layout: Any, data: list[dict[str, Any]]) -> None:
    """Give the recycling list's layout the height it will find for the rows of ``data``, before they are set.

    The list's height follows ``minimum_height`` (site.kv), which the layout computes while it places
    every row; a change of height then makes it place every row again (10,000 rows: two passes). Set
    beforehand, the same sum as the layout's own (``BoxLayout._iterate_layout``: padding and spacing,
    then each row's height in turn: its ``height`` in the data, else the default) leaves nothing to
    change, so the rows are placed once. Were a row to differ, the list would only be placed twice,
    never drawn wrong.
    """
    _, top, _, bottom = layout.padding
    total = top + bottom + layout.spacing * (len(data) - 1)
    row_height = layout.default_size[1]
    for row in data:
        total += row.get("height", row_height)
    layout.minimum_height = total


class SiteScreen(Screen):
    """A site: beams by level and gridline with status words and shapes; deficiencies by priority."""

    title = StringProperty("")
    visit_text = StringProperty("")
    message = StringProperty("")
    counts_text = StringProperty("")
    unraised_text = StringProperty("")
    fold_text = StringProperty("")
    caution_short = StringProperty(CAUTION_SHORT)
    wide = BooleanProperty(True)  # landscape: two columns; portrait: the deficiencies folded behind a button

    def on_kv_post(self, base_widget: Any) -> None:
        """Build the visit and raise-by-hand forms once (opened over the screen when asked)."""
        self.visit_form = Factory.VisitForm()
        self.hand_form = Factory.HandForm()
        self.hand_form.ids.hand_priority.values = [PRIORITY_LABELS[p] for p in PRIORITY_ORDER]
        self.hand_form.ids.hand_priority.text = PRIORITY_LABELS["before_loading"]
        self.visit_form.ids.start_visit.bind(on_release=lambda *_: self.start_visit())
        self.hand_form.ids.hand_raise.bind(on_release=lambda *_: self.raise_by_hand())
        self.fold = Factory.DeficiencyFold()
        self.fold.ids.fold_hand.bind(on_release=lambda *_: self.open_hand())
        self.caution_full = Factory.CautionFull()
        self.unraised_full = Factory.UnraisedFull()
        self._popup: Popup | None = None
        self._rows: list[tuple[str, dict[str, Any], str]] = []
        self._loading = False  # stale results are being rechecked in the background: the list is not read yet
        self._stale = 0  # how many were stale when this visit began (the message until the worker has a total)
        self._recheck: BackgroundRecheck | None = None  # the one this screen follows
        self._workers: list[BackgroundRecheck] = []  # every one started and perhaps still running (stopped on close)
        self._follow: Any = None  # the timer that follows the background recheck
        self._recheck_error = ""  # why this visit's background recheck failed: a line under the counts for the visit
        # the widgets themselves, not the weak proxies ``ids`` holds: a piece that one shape leaves out (the
        # fold button in landscape, the deficiency list in portrait) has no parent to keep it alive meanwhile
        self.pieces: dict[str, Any] = {name: w.__self__ for name, w in self.ids.items()}
        self.arrange(self.wide)

    def on_size(self, *_: Any) -> None:
        """Landscape or portrait: the columns follow the screen's shape."""
        self.wide = self.width >= self.height

    def on_wide(self, _screen: Any, wide: bool) -> None:
        """The screen turned: its pieces go where that shape has room for them."""
        if hasattr(self, "pieces"):  # not before the kv rule has built them (on_kv_post arranges them then)
            self.arrange(wide)

    def arrange(self, wide: bool) -> None:
        """Put the screen's pieces in their landscape (``wide``) or portrait places (site.kv says which is which).

        Landscape: the beams' column holds the search and filters with "+ Log a beam", the counts, the visit
        line and the list; the right-hand column the title, the site's buttons (the back and visit buttons
        among them, as in portrait), the open deficiencies under their heading and "Raise by hand…" (four
        whole rows in view: one and a third showed at 1280x800 under a row of buttons of their own), and
        the caution. Portrait:
        the site's buttons (the back and visit buttons among them) and the title over the search and filters,
        the list, then the visit line with the folded deficiencies and the caution; the deficiency list and
        its heading's row are left out.
        """
        w = SimpleNamespace(**self.pieces)
        bar = [w.search, w.level_filter, w.status_filter]
        w.visit_line.size_hint = (1, None) if wide else (0.58, 1)  # its own lines over the list, or beside a button
        if wide:
            place(w.page, [w.columns])
            place(w.list_bar, [*bar, w.new_beam])
            place(w.beams_side, [w.list_bar, w.counts, w.visit_line, w.beam_list])
            place(w.site_buttons, [w.back, w.edit_site, w.notice, w.sync, w.visit])
            place(w.deficiency_bar, [w.deficiency_heading, w.hand])
            side = [w.title, w.site_buttons, w.notes, w.deficiency_bar]
            place(w.side, [*side, w.deficiency_scroll, w.caution])
        else:
            place(w.site_buttons, [w.back, w.edit_site, w.notice, w.sync, w.visit])
            place(w.page, [w.site_buttons, w.title, w.columns])
            place(w.list_bar, [*bar, w.new_beam])
            place(w.beams_side, [w.list_bar, w.counts, w.beam_list])
            place(w.visit_row, [w.visit_line, w.fold])
            place(w.side, [w.visit_row, w.notes, w.caution])

    def on_pre_enter(self, *args: Any) -> None:
        """Refresh from storage; when many results are stale, say so on screen before rechecking them."""
        app = App.get_running_app()
        self.vm = SiteViewModel(app.store, app.site_id)
        self.title = self.vm.title()
        self.visit_text = self.vm.visit_line()
        self.show_deficiencies()
        self._rows = []
        self._recheck_error = ""
        stale = self.vm.stale_count()
        if stale < RECHECK_NOTICE_AT:
            self._load()
            return
        # e.g. every result after a table correction (10,000 beams: 2-4 s): rechecked in a worker thread while
        # the screen says how far it is and stays live (Back, "+ Log a beam"); the list comes when it is done
        self._loading = True
        self._stale = stale
        self.unraised_text = ""
        self.ids.level_filter.values = [ALL_LEVELS]  # this site's levels once its list is read (not the last site's)
        work = self._recheck if self._recheck is not None and self._recheck.running() else None
        if work is not None and work.site_id != app.site_id:
            work.stop(wait=False)  # another site's: it stops after its part under way, keeping what it stored
            work = None
        if work is None:
            work = self._recheck = BackgroundRecheck(str(app.store.path), app.site_id).start()
            self._workers = [w for w in self._workers if w.running()] + [work]
        self.counts_text = self.vm.rechecking_line(work.total or stale, work.done)  # back while it runs: how far
        lay_out_now(self, self.manager.size)
        self.ids.beam_list.data = [heading_row("Rechecking…")]
        if self._follow is None:
            self._follow = Clock.schedule_interval(self._follow_recheck, RECHECK_FOLLOW_S)

    def _follow_recheck(self, _dt: float) -> None:
        """Timer while the background recheck runs: its progress on screen; the list once it is done."""
        work = self._recheck
        if work is not None and work.running():
            if self._loading and work.site_id == self.vm.site_id:
                self.counts_text = self.vm.rechecking_line(work.total or self._stale, work.done)
            return
        if self._follow is not None:
            self._follow.cancel()
            self._follow = None
        self._recheck = None
        if not self._loading:
            return
        if work is not None and work.error and work.site_id == self.vm.site_id:
            # the worker failed: say so and why, and let a frame show it before this screen rechecks (and pauses)
            self._recheck_error = work.error
            self.counts_text = self.vm.recheck_failed_line(work.error, self.vm.stale_count())
            site_id = self.vm.site_id
            Clock.schedule_once(lambda _dt: self._load_after_failure(site_id), RECHECK_FOLLOW_S)
            return
        self._load()  # what the worker left stale (a beam saved meanwhile) is rechecked here

    def _load_after_failure(self, site_id: str) -> None:
        """``_load`` once the failure was shown, unless the reviewer has since left or opened another recheck."""
        if self._loading and self._recheck is None and self.vm.site_id == site_id:
            self._load()

    def stop_recheck(self) -> None:
        """The app is closing: every background recheck stops after its part under way (what it stored is kept)."""
        for work in self._workers:
            work.stop(wait=False)
        for work in self._workers:
            work.stop()

    def _load(self) -> None:
        """Read the beams (rechecking the stale ones) and lay them out with their counts and the unraised warning."""
        self._loading = False
        if self.manager is None or self.manager.current != self.name:
            return  # left before the recheck started: the next visit loads
        self._rows = self.vm.beam_rows()
        self.ids.level_filter.values = [ALL_LEVELS, *self.vm.levels(self._rows)]
        self.ids.status_filter.values = [ALL_STATUSES, *(status_label(s) for s in STATUS_WORDS)]
        groups = self._groups()
        self.counts_text = self._counts_line(groups)  # its height, before the layout
        lay_out_now(self, self.manager.size)  # before the list gets its rows: they are placed once
        self.show_beams(groups)
        self.unraised_text = self.vm.unraised_warning(tap=True)

    def after_sync(self) -> None:
        """A background sync finished while this screen is shown: redraw what it may have changed.

        The open deficiencies and the unraised warning always; the beam list and its counts when the sync
        made any of this site's results stale, so no row keeps showing the status from before the sync.
        The search, the filters and the list's scroll position stay as they are.
        """
        if not hasattr(self, "vm"):
            return
        if self._loading:  # the list comes when the recheck is done; a deficiency pulled by the sync shows now
            self.show_deficiencies()
            return
        if self.vm.stale():
            self._rows = self.vm.beam_rows()
            self.ids.level_filter.values = [ALL_LEVELS, *self.vm.levels(self._rows)]
            self.show_beams()
        self.show_deficiencies()
        self.unraised_text = self.vm.unraised_warning(tap=True)

    def filter_changed(self) -> None:
        """Search text or a filter changed: redraw the beam list."""
        if hasattr(self, "vm") and not self._loading:
            self.show_beams()

    def _groups(self) -> list[tuple[str, list[tuple[str, str, str]]]]:
        """The beams that match the search and filters, grouped by level."""
        level = "" if self.ids.level_filter.text == ALL_LEVELS else self.ids.level_filter.text
        status = next((s for s in STATUS_WORDS if status_label(s) == self.ids.status_filter.text), "")
        return self.vm.groups(self.ids.search.text, level, status, rows=self._rows)

    def _counts_line(self, groups: list[tuple[str, list[tuple[str, str, str]]]]) -> str:
        """The counts over the list; on a visit whose background recheck failed, a line saying so and why."""
        counts = self.vm.counts(self._rows, shown=self.vm.shown(groups))
        return counts + ("\n" + self.vm.recheck_failed_note(self._recheck_error) if self._recheck_error else "")

    def show_beams(self, groups: list[tuple[str, list[tuple[str, str, str]]]] | None = None) -> None:
        """The beams that match the search and filters (``groups`` when already found), in the recycling list."""
        groups = self._groups() if groups is None else groups
        data = list_data(groups, {beam_id: st for beam_id, _, st in self._rows})
        self.counts_text = self._counts_line(groups)
        if not data:
            data = [heading_row("No beam matches.")]
        presize(self.ids.beam_list.layout_manager, data)
        self.ids.beam_list.data = data

    def show_deficiencies(self) -> None:
        """Open deficiencies by priority, IMMEDIATE first, in the right-hand column; their counts on the fold."""
        groups = self.vm.deficiency_groups()
        self.fold_text = self.vm.fold_label(groups)
        self._fill_deficiencies(self.ids.deficiency_list, groups)

    def _fill_deficiencies(self, dbox: Any, groups: list[tuple[str, list[tuple[str, str]]]]) -> None:
        app = App.get_running_app()
        dbox.clear_widgets()
        if not groups:
            dbox.add_widget(Label(text="None open.", color=app.theme_fg, size_hint_y=None, height=dp(40)))
        for label, rows in groups:
            dbox.add_widget(_group_heading(label))
            for did, line in rows:
                dbox.add_widget(big_button(line, lambda _b, d=did: self._open_deficiency(d), font_size="16sp"))

    def _open_deficiency(self, deficiency_id: str) -> None:
        self._close()  # from the portrait fold: it closes first
        App.get_running_app().open_deficiency(deficiency_id)

    def open_fold(self) -> None:
        """Portrait: the open deficiencies, most urgent first, over the screen (read when opened)."""
        self._fill_deficiencies(self.fold.ids.fold_list, self.vm.deficiency_groups())
        self._open("Open deficiencies, most urgent first", self.fold)

    def open_unraised(self) -> None:
        """The whole findings-not-yet-raised warning (the band names only its first few beams)."""
        self.unraised_full.ids.unraised_full.text = self.vm.unraised_warning()
        self._open("Findings not yet raised", self.unraised_full)

    def open_caution(self) -> None:
        """The full caution (the band on this screen is its short form)."""
        self._open("Caution", self.caution_full)

    def edit_site(self) -> None:
        """Edit this site and its design basis (on the sites screen's form)."""
        app = App.get_running_app()
        app.go("sites")
        app.root.get_screen("sites").edit_site(app.site_id)

    def new_beam(self) -> None:
        """Log a new beam and open its form."""
        App.get_running_app().open_beam(self.vm.new_beam())

    def _open(self, title: str, form: Any) -> None:
        if form.parent is not None:
            form.parent.remove_widget(form)
        popup = Popup(title=title, content=form, size_hint=(0.94, 0.94), title_size="20sp", auto_dismiss=False)
        form.ids.cancel.unbind(on_release=self._close)
        form.ids.cancel.bind(on_release=self._close)
        self._popup = popup
        popup.open()

    def _close(self, *_: Any) -> None:
        if self._popup is not None:
            self._popup.dismiss()
            self._popup = None

    def open_visit(self) -> None:
        """Open the visit form (reviewer, weather, scope)."""
        self._open("Start a visit", self.visit_form)

    def open_hand(self) -> None:
        """Open the form for the reviewer's own observation (from the portrait fold: over it, in its place)."""
        self._close()
        self._open("Raise a deficiency by hand", self.hand_form)

    def start_visit(self) -> None:
        """Start a visit now."""
        ids = self.visit_form.ids
        if (
            self.vm.start_visit(
                ids.visit_reviewer.text, ids.visit_weather.text, ids.visit_scope.text, ids.visit_not_scope.text
            )
            is None
        ):
            ids.visit_message.text = "\n".join(self.vm.errors.values())
            return
        ids.visit_message.text = ""
        self.visit_text = self.vm.visit_line()
        self._close()

    def raise_by_hand(self) -> None:
        """Raise the reviewer's own observation as a numbered deficiency."""
        ids = self.hand_form.ids
        priority = next((p for p, w in PRIORITY_LABELS.items() if w == ids.hand_priority.text), ids.hand_priority.text)
        number = self.vm.raise_by_hand(
            ids.hand_location.text, ids.hand_description.text, ids.hand_action.text, priority
        )
        if number is None:
            ids.hand_message.text = "\n".join(self.vm.errors.values())
            return
        ids.hand_message.text = ""
        self.message = f"Raised {number}"
        for k in ("hand_location", "hand_description", "hand_action"):
            ids[k].text = ""
        self._close()
        self.on_pre_enter()


GROUP_HEADING_MM = 6.0  # a priority's heading in the open-deficiency list: one line of 18sp type, not a target


def _group_heading(text: str) -> Label:
    """A priority's heading in the open-deficiency list ('▲ IMMEDIATE: make safe now (5)'), one line high.

    Its own height (the shared heading is at least 11 mm): four whole rows under it fit at 1280x800.
    """
    app = App.get_running_app()
    label = Label(
        text=text, font_size="18sp", bold=True, color=app.theme_fg, size_hint_y=None, height=mm(GROUP_HEADING_MM)
    )
    label.shorten, label.halign, label.valign = True, "left", "middle"
    label.bind(size=lambda w, size: setattr(w, "text_size", size))
    return label
