"""The sites screen (sites.kv): sites on this tablet with their sync state; create a site."""

from __future__ import annotations

from typing import Any

from kivy.app import App
from kivy.properties import StringProperty
from kivy.uix.screenmanager import Screen

from mobile.screens.widgets import (
    big_button,
)
from mobile.viewmodels import SitesViewModel
from mobile.viewmodels.beam import CHOICE_WORDS


class SitesScreen(Screen):
    """Sites on this tablet with their sync state; create a site."""

    error_text = StringProperty("")

    def on_pre_enter(self, *args: Any) -> None:
        """Fill the site list."""
        app = App.get_running_app()
        self.vm = SitesViewModel(app.store)
        box = self.ids.site_list
        box.clear_widgets()
        for site_id, text in self.vm.rows():
            box.add_widget(big_button(text, lambda _b, sid=site_id: app.open_site(sid), height="22mm"))

    def create(self) -> None:
        """Create the site from the form and open it."""
        form = {
            k: self.ids[f"new_{k}"].text
            for k in (
                "name",
                "address",
                "permit_number",
                "project_number",
                "firm",
                "dead_kpa",
                "live_kpa",
                "snow_kpa",
                "use",
            )
        }
        form["use"] = next((c for c, w in CHOICE_WORDS.items() if w == form["use"]), form["use"])
        site = self.vm.create(form)
        self.error_text = "\n".join(self.vm.errors.values())
        if site is not None:
            for k in form:
                if k != "use":
                    self.ids[f"new_{k}"].text = ""
            App.get_running_app().open_site(site.id)
