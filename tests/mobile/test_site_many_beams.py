"""The site screen's words on a large site (session-25 review, 10,000 beams at tablet geometries).

Found there: the unraised-findings warning listed ~2,800 marks in one line cut off after the first few,
so the reviewer never saw how many beams had findings not yet raised; the counts line printed 10000
without a separator and said nothing of how many beams a search left; a site without an address had a
title ending in a lone separator.
"""

import pytest

from core.results import CAUTION
from mobile.demo.run import load_demo, raise_all
from mobile.viewmodels import SiteViewModel
from mobile.viewmodels.common import APP_CAUTION
from mobile.viewmodels.site import (
    CAUTION_SHORT,
    LEVEL_NOT_RECORDED,
    PINNED,
    UNRAISED_BAND_NAMED,
    UNRAISED_NAMED,
    level_key,
)
from storage import Store
from tests.core.beams import glulam


@pytest.fixture
def store(tmp_path):
    return Store(tmp_path / "big.db")


def _overstressed(store, site_id, n):
    """N beams that fail their recheck (a 190 mm deep glulam over 7.2 m under demo-style roof loads)."""
    return [
        store.save_beam(site_id, glulam(mark=f"B-{i}", d_mm=190), {"level": "Roof", "gridline": f"A/{i}"})
        for i in range(n)
    ]


def test_the_unraised_warning_counts_the_beams_first_and_names_a_bounded_few(store):
    site = store.create_site(name="Depot")
    vm = SiteViewModel(store, site.id)
    _overstressed(store, site.id, UNRAISED_NAMED + 5)
    marks = vm.unraised()
    assert len(marks) == UNRAISED_NAMED + 5  # every beam has a finding not raised
    text = vm.unraised_warning()
    assert text.startswith(f"▲ Findings not yet raised on {UNRAISED_NAMED + 5} beams (not on any notice): ")
    assert text.endswith(f"{marks[UNRAISED_NAMED - 1]} and 5 more")
    assert marks[UNRAISED_NAMED] not in text.split(": ", 1)[1].split(", ")
    band = vm.unraised_warning(tap=True)  # the site screen's band: a few beams named, a tap shows it all
    head = f"▲ Findings not yet raised on {UNRAISED_NAMED + 5} beams (not on any notice; tap to read all): "
    more = UNRAISED_NAMED + 5 - UNRAISED_BAND_NAMED
    assert band == head + ", ".join(marks[:UNRAISED_BAND_NAMED]) + f" and {more} more"
    one = store.create_site(name="Shed")
    _overstressed(store, one.id, 1)
    assert SiteViewModel(store, one.id).unraised_warning().startswith("▲ Findings not yet raised on 1 beam (")


def test_counts_use_thousands_separators_and_say_how_many_a_search_shows():
    rows = [(f"b{i}", {"mark": f"B-{i}"}, "ok" if i % 4 else "deficient") for i in range(10_000)]
    # each status's shape, count and words joined by no-break spaces: a wrapped line never splits one
    assert SiteViewModel.counts(rows) == "10,000 beams:  ●\u00a07,500\u00a0OK  ·  ▲\u00a02,500\u00a0DEFICIENT"
    assert SiteViewModel.counts(rows, shown=10_000) == SiteViewModel.counts(rows)
    assert SiteViewModel.counts(rows, shown=111).endswith("\n111 shown (search or filter)")
    assert SiteViewModel.counts([], shown=0) == "No beams logged yet."


def test_shown_counts_a_pinned_beam_once():
    groups = [(PINNED, [("b1", "B-1", "▲ DEFICIENT")]), ("Roof", [("b1", "B-1", "▲ DEFICIENT"), ("b2", "B-2", "")])]
    assert SiteViewModel.shown(groups) == 2


def test_the_title_has_no_lone_separator_without_an_address(store):
    bare = store.create_site(name="Depot")
    assert SiteViewModel(store, bare.id).title() == "Depot"
    full = store.create_site(name="Arena", address="12 Main St")
    assert SiteViewModel(store, full.id).title() == "Arena  ·  12 Main St"


def test_the_folded_deficiencies_button_counts_them_and_the_immediate_ones(tmp_path):
    """Portrait folds the open deficiencies behind one button: it must still say how many, and how many are urgent.

    Expected counts from the demo's own records (each deficiency raised by ``raise_all``), counted here by priority.
    """
    store = Store(tmp_path / "demo.db")
    site_id = load_demo(store)
    vm = SiteViewModel(store, site_id)
    assert vm.fold_label(vm.deficiency_groups()) == "Open deficiencies: none…"
    raise_all(store, site_id)
    open_now = store.deficiencies(site_id, open_only=True)
    urgent = sum(d.priority == "immediate" for d in open_now)
    assert urgent > 0
    label = vm.fold_label(vm.deficiency_groups())
    # the ellipsis on the words that open the list, not after the IMMEDIATE count (read as a number cut short)
    assert label == f"Open deficiencies ({len(open_now)})…\n▲ IMMEDIATE: {urgent}"
    calm = [(lbl, rows) for lbl, rows in vm.deficiency_groups() if not lbl.startswith("▲")]
    assert vm.fold_label(calm) == f"Open deficiencies ({sum(len(r) for _, r in calm)})…"  # no IMMEDIATE line


def test_the_short_caution_still_says_what_governs():
    """The site screen's short caution keeps the full caution's words on the results and on who governs.

    The phrases are the full caution's own (core.results.CAUTION), which the short form's tap shows whole.
    """
    for phrase in (
        "support, never replace, the judgement of the engineer of record",
        "Local codes and licensed practice govern",
    ):
        assert phrase in CAUTION
        assert phrase in CAUTION_SHORT
    assert "full caution" in CAUTION_SHORT  # says a tap shows the rest
    assert len(CAUTION_SHORT) < len(CAUTION) / 2


def test_the_app_caution_keeps_cores_caution_and_says_what_was_not_seen_is_unfavourable():
    """Both bands say that what was not seen or not recorded is taken as the unfavourable case (session-34 review)."""
    said = "What was not seen or not recorded is taken as the unfavourable case."
    assert APP_CAUTION.startswith(CAUTION)  # every sentence of core's caution, unchanged
    assert said in APP_CAUTION
    assert said in CAUTION_SHORT


def test_levels_are_listed_in_natural_order():
    """L2 before L10, as floors are numbered on drawings (common practice); letters as text, so B1 before L1."""
    shown = ["L10", "Roof", "L2", "B1", "l3", "L1", LEVEL_NOT_RECORDED, "P2", "L02"]
    assert sorted(shown, key=level_key) == ["B1", "L1", "L02", "L2", "l3", "L10", LEVEL_NOT_RECORDED, "P2", "Roof"]
    rows = [(f"b{i}", {"mark": f"M-{i}", "level": level}, "ok") for i, level in enumerate(["L10", "L2", "L1"])]
    assert SiteViewModel.levels(rows) == ["L1", "L2", "L10"]


def test_the_site_list_groups_levels_in_natural_order(store):
    site = store.create_site(name="Tower")
    for level in ("L10", "L2", "L1"):
        store.save_beam(site.id, glulam(mark=f"{level}-B1"), {"level": level, "gridline": "A/1"})
    vm = SiteViewModel(store, site.id)
    assert [where for where, _ in vm.groups()] == ["L1", "L2", "L10"]  # stored order is L1, L10, L2 (as text)
