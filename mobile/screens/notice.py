"""The notice screen (notice.kv): choose items, preview the PDF pages, issue, export."""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import Any

from kivy.app import App
from kivy.metrics import dp
from kivy.properties import StringProperty
from kivy.uix.label import Label
from kivy.uix.screenmanager import Screen

from mobile.screens.widgets import (
    big_button,
)
from mobile.viewmodels import NoticeViewModel, SiteViewModel
from mobile.viewmodels.common import default_export_dir

PREVIEW_DIR = Path(tempfile.gettempdir()) / "bracewalk-preview"  # page images of the notice being previewed


class NoticeScreen(Screen):
    """Choose the open items, preview the PDF pages, issue (then read-only), export."""

    message = StringProperty("")
    page_text = StringProperty("no preview yet")
    page_source = StringProperty("")
    warning_text = StringProperty("")  # beams not yet raised, a signer without phone or email
    ack_text = StringProperty("")

    def on_pre_enter(self, *args: Any) -> None:
        """Fill the item and issued lists."""
        app = App.get_running_app()
        self.vm = NoticeViewModel(app.store, app.site_id)
        self.pages: list[Path] = []
        self.page = 0
        self.page_source, self.page_text = "", "no preview yet"
        if not self.ids.export_dir.text:
            self.ids.export_dir.text = str(default_export_dir())
        warnings = (SiteViewModel(app.store, app.site_id).unraised_warning(), self.vm.contact_warning())
        self.warning_text = "\n".join(w for w in warnings if w)
        self.render()

    def render(self) -> None:
        """Items with their chosen state; issued notices with an Export button each."""
        box = self.ids.item_list
        box.clear_widgets()
        for did, line, chosen in self.vm.candidates():
            mark = "☑ " if chosen else "☐ "
            box.add_widget(big_button(mark + line, lambda _b, d=did: self.toggle(d), font_size="16sp"))
        self.render_rows()
        issued = self.ids.issued
        issued.clear_widgets()
        for nid, line in self.vm.issued():
            issued.add_widget(big_button("Export  " + line, lambda _b, n=nid: self.export(n), font_size="15sp"))

    def render_rows(self) -> None:
        """The table rows the chosen items rest on, each with its status; where the acknowledgement stands."""
        box = self.ids.rows_list
        box.clear_widgets()
        for line in self.vm.table_row_lines():
            label = Label(text=line, font_size="15sp", color=App.get_running_app().theme_fg, size_hint_y=None)
            label.bind(
                width=lambda w, v: setattr(w, "text_size", (v, None)),
                texture_size=lambda w, ts: setattr(w, "height", ts[1] + dp(4)),
            )
            box.add_widget(label)
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

    def issue_closeout(self) -> None:
        """Issue the close-out notice after a re-review (the outcomes recorded on each item)."""
        out_dir = Path(App.get_running_app().store.path).parent / "notices"
        path = self.vm.issue_closeout(self.ids.issued_by.text, out_dir)
        self.message = self.vm.message
        if path is not None:
            self.pages = self.vm.preview_pages(PREVIEW_DIR, path.read_bytes())
            self.page = 0
            self.show_page()
            self.page_text = f"ISSUED close-out, page 1 of {len(self.pages)}"
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
