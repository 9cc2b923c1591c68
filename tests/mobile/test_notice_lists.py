"""The notice screen's lists: the height of their windows, and the headings that count what they hold."""

import pytest

from mobile.demo.run import load_demo, raise_all
from mobile.screens.notice import window_height
from mobile.viewmodels import NoticeViewModel
from storage import Store


@pytest.mark.parametrize(
    ("heights", "rows", "expected"),
    [
        ([10, 20, 30], 4, 10 + 20 + 30 + 2 * 5),  # fewer rows than the window shows: all of them, no peek
        ([10, 20, 30, 40], 4, 10 + 20 + 30 + 40 + 3 * 5),  # exactly as many: no peek
        ([10, 20, 30, 40, 50], 4, 10 + 20 + 30 + 40 + 4 * 5 + 7),  # one more: 7 px of it shows
        ([10, 20, 30, 40, 3], 4, 10 + 20 + 30 + 40 + 4 * 5 + 3),  # a next row shorter than the peek: all of it
    ],
)
def test_a_list_window_shows_its_first_rows_whole_and_a_strip_of_the_next(heights, rows, expected):
    assert window_height(heights, 5, rows, 7, most=1000, least=0) == expected


def test_a_list_window_fits_on_screen_and_is_never_under_a_target():
    assert window_height([100, 100, 100, 100, 100], 5, 4, 7, most=250, least=0) == 250
    assert window_height([], 5, 4, 7, most=250, least=88) == 88
    assert window_height([30], 5, 4, 7, most=250, least=88) == 88


def test_the_headings_count_the_items_chosen_and_the_rows_from_memory(tmp_path):
    store = Store(tmp_path / "n.db")
    site_id = load_demo(store)
    raise_all(store, site_id)  # the demo's findings raised as items, as the app does on first run
    vm = NoticeViewModel(store, site_id)
    total = len(vm.candidates())
    rows, memory = len(vm.table_rows()), len(vm.memory_rows())
    assert total > 1  # the demo has items
    assert 0 < memory < rows  # and rows both verified and entered from memory
    assert vm.items_heading().startswith(f"1. Choose the items: {total} of {total} chosen")
    assert vm.rows_heading() == f"2. Table rows these items rest on: {rows}, {memory} of them entered from memory"
    vm.toggle(vm.candidates()[0][0])
    assert vm.items_heading().startswith(f"1. Choose the items: {total - 1} of {total} chosen")
    for did, _line, _chosen in vm.candidates():
        vm.chosen.discard(did)
    assert vm.rows_heading() == "2. Table rows these items rest on: 0, 0 of them entered from memory"
