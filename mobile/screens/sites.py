"""The sites screen (sites.kv): sites on this tablet with their sync state; create a site."""

from __future__ import annotations

from typing import Any

from kivy.app import App
from kivy.metrics import dp, mm
from kivy.properties import StringProperty
from kivy.uix.screenmanager import Screen

from mobile.screens.widgets import (
    big_button,
)
from mobile.viewmodels import SitesViewModel
from mobile.viewmodels.beam import CHOICE_WORDS

SITE_ROW_MM = 22  # a site's button at least: its name, address and sync state on two to four lines
FORM_FIELDS = (
    "name",
    "address",
    "permit_number",
    "project_number",
    "owner",
    "contractor",
    "contractor_contact",
    "engineer_of_record",
    "distribution",
    "firm",
    "dead_kpa",
    "live_kpa",
    "snow_kpa",
    "load_bases",
    "use",
)


class SitesScreen(Screen):
    """Sites on this tablet with their sync state; create a site, or edit one (``edit_site``)."""

    error_text = StringProperty("")
    editing = StringProperty("")  # the id of the site being edited; '' when the form creates a new site
    form_title = StringProperty("New site")

    def on_pre_enter(self, *args: Any) -> None:
        """Fill the site list."""
        app = App.get_running_app()
        self.vm = SitesViewModel(app.store)
        box = self.ids.site_list
        box.clear_widgets()
        for site_id, text in self.vm.rows():
            button = big_button(text, lambda _b, sid=site_id: app.open_site(sid), height=mm(SITE_ROW_MM))
            # as tall as its lines: a long name and address are never cut by the row
            button.bind(texture_size=lambda b, ts: setattr(b, "height", max(mm(SITE_ROW_MM), ts[1] + dp(12))))
            box.add_widget(button)

    def edit_site(self, site_id: str) -> None:
        """Put an existing site and its design basis into the form, to change them."""
        self.vm = SitesViewModel(App.get_running_app().store)
        values = self.vm.form_of(site_id)
        for k in FORM_FIELDS:
            self.ids[f"new_{k}"].text = CHOICE_WORDS.get(values[k], values[k]) if k == "use" else values[k]
        self.editing, self.form_title, self.error_text = site_id, f"Edit site: {values['name']}", ""

    def create(self) -> None:
        """Create the site from the form (or save the site being edited) and open it."""
        form = {k: self.ids[f"new_{k}"].text for k in FORM_FIELDS}
        form["use"] = next((c for c, w in CHOICE_WORDS.items() if w == form["use"]), form["use"])
        site = self.vm.update(self.editing, form) if self.editing else self.vm.create(form)
        self.error_text = "\n".join(self.vm.errors.values())
        if site is not None:
            for k in form:
                if k != "use":
                    self.ids[f"new_{k}"].text = ""
            self.editing, self.form_title = "", "New site"
            App.get_running_app().open_site(site.id)
