"""App status colours come from the status enum's values, never from the label's wording."""

import pytest

from core.results import Status
from mobile.screens import widgets
from mobile.viewmodels import common


def test_every_status_has_its_own_colour():
    # every value the site list or the beam form can show: core's Status and the app's "unchecked"
    keys = {s.value for s in Status} | {widgets.UNCHECKED}
    assert set(widgets.STATUS_COLOURS) == keys
    assert set(common.STATUS_WORDS) == keys  # the words and shapes cover the same statuses
    assert len(set(widgets.STATUS_COLOURS.values())) == len(keys)  # no two statuses share a colour


@pytest.mark.parametrize("status", [*Status, "unchecked"])
def test_colour_follows_the_value_not_the_label(status, monkeypatch):
    before = widgets.status_colour(status)
    # reword every label: the colour must not move (it used to be picked by splitting the label text)
    monkeypatch.setattr(common, "STATUS_WORDS", {k: (f"reworded {k}", "?") for k in common.STATUS_WORDS})
    assert widgets.status_colour(status) == before
    assert widgets.status_colour(str(status)) == before  # the stored plain value gives the same colour


def test_unknown_status_is_refused_by_name():
    with pytest.raises(ValueError, match=r"status 'OK'; allowed: ok, deficient"):
        widgets.status_colour("OK")  # a label word, not a status value
