"""The site screen (site.kv): beams by level and gridline, open deficiencies, the visit."""

from __future__ import annotations

from typing import Any

from kivy.app import App
from kivy.metrics import dp
from kivy.properties import StringProperty
from kivy.uix.label import Label
from kivy.uix.screenmanager import Screen

from mobile.screens.widgets import (
    big_button,
    status_colour,
)
from mobile.viewmodels import SiteViewModel


class SiteScreen(Screen):
    """A site: beams by level and gridline with status words and shapes; deficiencies by priority."""

    title = StringProperty("")
    visit_text = StringProperty("")
    message = StringProperty("")

    def on_pre_enter(self, *args: Any) -> None:
        """Refresh from storage."""
        app = App.get_running_app()
        self.vm = SiteViewModel(app.store, app.site_id)
        site = app.store.site(app.site_id)
        self.title = f"{site.name}  ·  {site.address}"
        self.visit_text = self.vm.visit_line()
        box = self.ids.beam_list
        box.clear_widgets()
        for level, rows in self.vm.groups():
            box.add_widget(
                Label(
                    text=f"Level: {level}",
                    font_size="20sp",
                    bold=True,
                    color=app.theme_fg,
                    size_hint_y=None,
                    height=dp(40),
                    halign="left",
                    text_size=(None, None),
                )
            )
            for beam_id, name, status in rows:
                box.add_widget(
                    big_button(
                        f"{status}      {name}", lambda _b, bid=beam_id: app.open_beam(bid), bg=status_colour(status)
                    )
                )
        dbox = self.ids.deficiency_list
        dbox.clear_widgets()
        groups = self.vm.deficiency_groups()
        if not groups:
            dbox.add_widget(Label(text="None open.", color=app.theme_fg, size_hint_y=None, height=dp(40)))
        for label, rows in groups:
            dbox.add_widget(
                Label(text=label, font_size="18sp", bold=True, color=app.theme_fg, size_hint_y=None, height=dp(34))
            )
            for did, line in rows:
                dbox.add_widget(big_button(line, lambda _b, d=did: app.open_deficiency(d), font_size="16sp"))

    def new_beam(self) -> None:
        """Log a new beam and open its form."""
        App.get_running_app().open_beam(self.vm.new_beam())

    def start_visit(self) -> None:
        """Start a visit now."""
        if (
            self.vm.start_visit(
                self.ids.visit_reviewer.text,
                self.ids.visit_weather.text,
                self.ids.visit_scope.text,
                self.ids.visit_not_scope.text,
            )
            is None
        ):
            self.message = "\n".join(self.vm.errors.values())
            return
        self.message = ""
        self.visit_text = self.vm.visit_line()

    def raise_by_hand(self) -> None:
        """Raise the reviewer's own observation as a numbered deficiency."""
        number = self.vm.raise_by_hand(
            self.ids.hand_location.text,
            self.ids.hand_description.text,
            self.ids.hand_action.text,
            self.ids.hand_priority.text,
        )
        if number is None:
            self.message = "\n".join(self.vm.errors.values())
            return
        self.message = f"Raised {number}"
        for k in ("hand_location", "hand_description", "hand_action"):
            self.ids[k].text = ""
        self.on_pre_enter()
