"""The notice screen (notice.kv): choose items, preview the PDF pages, issue, export."""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import Any

from kivy.app import App
from kivy.clock import Clock
from kivy.metrics import dp, mm
from kivy.properties import NumericProperty, ObjectProperty, StringProperty
from kivy.uix.behaviors import ButtonBehavior
from kivy.uix.boxlayout import BoxLayout
from kivy.uix.image import Image
from kivy.uix.label import Label
from kivy.uix.modalview import ModalView
from kivy.uix.screenmanager import Screen
from kivy.uix.widget import Widget

from mobile.screens.widgets import (
    WrappingInput,
    big_button,
)
from mobile.viewmodels import NoticeViewModel, SiteViewModel
from mobile.viewmodels.common import default_export_dir

PREVIEW_DIR = Path(tempfile.gettempdir()) / "bracewalk-preview"  # page images of the notice being previewed
ITEMS_SHOWN = 4  # item rows the list shows whole before it scrolls
ROWS_SHOWN = 5  # table rows the list shows whole before it scrolls
PEEK_MM = 5  # of the next row under a list's last whole row: a list that scrolls shows that it does
LIST_SHARE = 0.8  # a list's window is at most this share of the page's, so it fits on screen with its heading


def window_height(heights: list[float], spacing: float, rows: int, peek: float, most: float, least: float) -> float:
    """The height (px) of a list's window showing its first ``rows`` rows whole and ``peek`` px of the next.

    ``heights`` are the rows' heights in order (px), ``spacing`` the gap between rows (px); never over ``most``
    (px: the list fits on screen) nor under ``least`` (px: a target's height).
    """
    shown = heights[:rows]
    height = sum(shown) + spacing * max(len(shown) - 1, 0)
    if len(heights) > rows:
        height += spacing + min(peek, heights[rows])
    return max(least, min(height, most))


class PathInput(WrappingInput):
    """A folder's path shown whole: wrapped over as many lines as it needs, between its parts ('/') too.

    A path has few spaces, so one line showed only its end ("cewalk-exports") in the column's width.
    """

    _tokenize_delimiters = " /\\\r\t"  # WrappingInput's, and the path separators


class PagePreview(ButtonBehavior, Image):
    """The page being previewed: a tap opens it across the whole window (``PageFull``)."""


class PageFull(BoxLayout):
    """The previewed page across the window's width, with the page buttons and the caution (notice.kv)."""

    screen = ObjectProperty(None, rebind=True)
    view: ModalView | None = None

    def close(self) -> None:
        """Back to the notice screen."""
        if self.view is not None:
            self.view.dismiss(animation=False)


class NoticeScreen(Screen):
    """Choose the open items, preview the PDF pages, issue (then read-only), export."""

    message = StringProperty("")
    page_text = StringProperty("no preview yet")
    page_source = StringProperty("")
    warning_text = StringProperty("")  # beams not yet raised, a signer without phone or email
    ack_text = StringProperty("")
    issued_state = StringProperty("")  # 'Issued P-FR-AB12-001 rev 0 · 9 items' while the same items are chosen
    items_heading = StringProperty("")
    rows_heading = StringProperty("")
    items_height = NumericProperty(0)  # the lists' windows (px): their first rows whole (``fit_lists``)
    rows_height = NumericProperty(0)
    full: PageFull | None = None  # the page opened full size, while it is open
    page_kind = "draft page"  # or "ISSUED page", "ISSUED close-out, page": what the pages shown are

    def on_kv_post(self, base_widget: Widget) -> None:
        """Size the lists' windows again whenever their rows or the page's window change height."""
        self._fit = Clock.create_trigger(lambda _dt: self.fit_lists())
        self.ids.item_list.bind(minimum_height=self._fit)
        self.ids.rows_list.bind(minimum_height=self._fit)
        self.ids.page_scroll.bind(height=self._fit)

    def fit_lists(self) -> None:
        """Each list's window shows its first rows whole (items ``ITEMS_SHOWN``, table rows ``ROWS_SHOWN``)."""
        most = self.ids.page_scroll.height * LIST_SHARE
        for box, rows, name in (
            (self.ids.item_list, ITEMS_SHOWN, "items_height"),
            (self.ids.rows_list, ROWS_SHOWN, "rows_height"),
        ):
            heights = [w.height for w in reversed(box.children)]
            pad = box.padding[1] + box.padding[3]
            inner = window_height(heights, box.spacing, rows, mm(PEEK_MM), most - pad, mm(15) - pad)
            setattr(self, name, inner + pad)

    def on_pre_enter(self, *args: Any) -> None:
        """Fill the item and issued lists."""
        app = App.get_running_app()
        self.vm = NoticeViewModel(app.store, app.site_id)
        self.pages: list[Path] = []
        self.page = 0
        self.page_source, self.page_text, self.page_kind = "", "no preview yet", "draft page"
        self.message = ""
        if not self.ids.export_dir.text:
            self.ids.export_dir.text = str(default_export_dir())
        if not self.ids.issued_by.text.strip():  # the signer, or who issued last: typed once, not on every notice
            self.ids.issued_by.text = self.vm.issuer()
        warnings = (SiteViewModel(app.store, app.site_id).unraised_warning(), self.vm.contact_warning())
        self.warning_text = "\n".join(w for w in warnings if w)
        self.render()
        self.ids.page_scroll.scroll_y = 1

    def render(self) -> None:
        """Items with their chosen state; issued notices with an Export button each."""
        box = self.ids.item_list
        box.clear_widgets()
        candidates = self.vm.candidates()
        for did, line, chosen in candidates:
            mark = "☑ " if chosen else "☐ "
            box.add_widget(big_button(mark + line, lambda _b, d=did: self.toggle(d), font_size="16sp", grow=True))
        if not candidates:
            box.add_widget(_line("No open item on this site."))
        self.items_heading = self.vm.items_heading()
        self.issued_state = self.vm.issued_state() if self.vm.issued_again() else ""
        self.render_rows()
        issued = self.ids.issued
        issued.clear_widgets()
        for nid, line in self.vm.issued():
            issued.add_widget(
                big_button("Export  " + line, lambda _b, n=nid: self.export(n), font_size="15sp", grow=True)
            )

    def render_rows(self) -> None:
        """The table rows the chosen items rest on, each with its status; where the acknowledgement stands."""
        box = self.ids.rows_list
        box.clear_widgets()
        lines = self.vm.table_row_lines()
        for line in lines:
            box.add_widget(_line(line))
        if not lines:
            box.add_widget(_line("No table row: no item chosen, or the chosen items rest on none."))
        self.rows_heading = self.vm.rows_heading()
        self.ack_text = self.vm.acknowledgement_text()

    def acknowledge(self) -> None:
        """The reviewer (issued by) acknowledges the memory rows listed: who and when go on the notice."""
        self.vm.acknowledge(self.ids.issued_by.text)
        self.message = self.vm.message
        self.render_rows()

    def toggle(self, deficiency_id: str) -> None:
        """Include or leave out one item."""
        self.vm.toggle(deficiency_id)
        self.render()

    def preview(self) -> None:
        """Render the draft notice and show its first page."""
        self.pages = self.vm.preview_pages(PREVIEW_DIR)
        self.page, self.page_kind = 0, "draft page"
        self.show_page()

    def turn(self, step: int) -> None:
        """Next / previous page (buttons, no swipe needed)."""
        if self.pages:
            self.page = max(0, min(len(self.pages) - 1, self.page + step))
            self.show_page()

    def show_page(self) -> None:
        """Show the current page image (here, and full size when open: from its top)."""
        self.page_source = str(self.pages[self.page])
        self.page_text = f"{self.page_kind} {self.page + 1} of {len(self.pages)}"
        if self.full is not None:
            self.full.ids.full_scroll.scroll_y = 1

    def enlarge(self) -> None:
        """Open the page shown across the whole window, to read it (its page buttons turn this screen's pages)."""
        if not self.page_source:
            self.message = "No page to read yet: tap Show the draft first"
            return
        view = ModalView(size_hint=(1, 1), auto_dismiss=False)
        full = PageFull(screen=self)
        full.view = view
        view.add_widget(full)
        view.bind(on_dismiss=lambda *_: setattr(self, "full", None))
        self.full = full
        view.open()

    def issue(self) -> None:
        """Issue the chosen items."""
        out_dir = Path(App.get_running_app().store.path).parent / "notices"
        path = self.vm.issue(self.ids.issued_by.text, out_dir)
        self.message = self.vm.message
        if path is not None:  # the view model keeps what it issued: the same items are not issued twice
            self.pages = self.vm.preview_pages(PREVIEW_DIR, path.read_bytes())
            self.page, self.page_kind = 0, "ISSUED page"
            self.show_page()
        self.render()

    def issue_closeout(self) -> None:
        """Issue the close-out notice after a re-review (the outcomes recorded on each item)."""
        out_dir = Path(App.get_running_app().store.path).parent / "notices"
        path = self.vm.issue_closeout(self.ids.issued_by.text, out_dir)
        self.message = self.vm.message
        if path is not None:
            self.pages = self.vm.preview_pages(PREVIEW_DIR, path.read_bytes())
            self.page, self.page_kind = 0, "ISSUED close-out, page"
            self.show_page()
        self.render()

    def export(self, notice_id: str) -> None:
        """Copy an issued notice's PDF into the export folder (to share)."""
        try:
            self.vm.export(notice_id, Path(self.ids.export_dir.text.strip()).expanduser())
        except (OSError, ValueError) as exc:
            self.message = f"Not exported: {exc}"
            return
        self.message = self.vm.message


def _line(text: str) -> Label:
    """A wrapped line of a list, as tall as its text."""
    label = Label(text=text, font_size="15sp", color=App.get_running_app().theme_fg, size_hint_y=None)
    label.bind(
        width=lambda w, v: setattr(w, "text_size", (v, None)),
        texture_size=lambda w, ts: setattr(w, "height", ts[1] + dp(4)),
    )
    return label
