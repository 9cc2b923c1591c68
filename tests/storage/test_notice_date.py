"""A notice is never dated before an item it carries was raised.

Common practice: a deficiency notice lists deficiencies already raised, so its date is on or after the day
each of its items was raised. A back-dated notice is refused with a clear error naming the field, and nothing
is stored (no number, no PDF, no record); the items are never silently re-dated.
"""

import pytest

from storage import Store
from tests.core.beams import glulam

NOON_5_DEC = 1_796_472_000_000  # 2026-12-05 12:00 UTC: the same calendar day from UTC-11 to UTC+11


def _store(tmp_path):
    tick = iter(range(10_000))
    store = Store(tmp_path / "t.db", wall_clock_ms=lambda: NOON_5_DEC + next(tick))
    site = store.create_site(name="Dates")
    beam = store.save_beam(site.id, glulam(mark="B-1"))
    d = store.raise_deficiency(site.id, beam, "x", "immediate", "Grid A", "no blocking", "r", "a")
    return store, site, d


def test_a_notice_dated_before_its_item_was_raised_is_refused_and_nothing_stored_on_or_after_is_issued(tmp_path):
    store, site, d = _store(tmp_path)
    with pytest.raises(ValueError, match=rf"issued_at 2026-12-04: before {d.number} was raised \(2026-12-05\)"):
        store.issue_notice(site.id, "N-1", b"%PDF-1.4 back-dated", [d.id], "R. Eng", "2026-12-04")
    assert store.notices(site.id) == []
    assert store.next_notice_number(store.site(site.id)).endswith("001")  # no number spent
    with pytest.raises(ValueError, match="issued_at"):
        store.issue_notice(site.id, "N-1", b"%PDF-1.4", [d.id], "R. Eng", "2026-12-04T23:59:00Z")
    # dated the day the item was raised, or later: issued
    same_day = store.issue_notice(site.id, "N-1", b"%PDF-1.4 same day", [d.id], "R. Eng", "2026-12-05")
    later = store.issue_notice(site.id, "N-2", b"%PDF-1.4 later", [d.id], "R. Eng", "2026-12-06T09:00:00Z")
    assert [n.issued_at for n in (same_day, later)] == ["2026-12-05", "2026-12-06T09:00:00Z"]


def test_a_notice_date_that_is_not_a_date_is_refused_by_name(tmp_path):
    store, site, d = _store(tmp_path)
    with pytest.raises(ValueError, match="issued_at 'last Tuesday': not a date"):
        store.issue_notice(site.id, "N-1", b"%PDF-1.4", [d.id], "R. Eng", "last Tuesday")


def test_the_app_path_refuses_a_back_dated_notice_and_leaves_no_file(tmp_path):
    from mobile.issue import acknowledge, issue_notice_for_site, rows_for_items

    store, site, d = _store(tmp_path)
    out = tmp_path / "n.pdf"
    ack = acknowledge(store, rows_for_items(store, site.id), "R. Eng")  # the beam rests on memory rows
    with pytest.raises(ValueError, match=f"before {d.number} was raised"):
        issue_notice_for_site(store, site.id, out, issued_by="R. Eng", issued_on="2026-11-30", acknowledgement=ack)
    assert not out.exists()
    assert store.notices(site.id) == []


def test_an_item_a_colleague_raised_with_a_clock_a_day_fast_does_not_block_todays_notice(tmp_path):
    """A colleague's clock set a day ahead does not stop today's IMMEDIATE notice here, or force tomorrow's date.

    Stamps are each device's own (sync.md 3.3): the item is dated by the colleague's clock, not this one's.
    """
    from tests.storage.devices import sync_file
    from tests.storage.signing import introduce

    day = 24 * 3600 * 1000
    here = Store(tmp_path / "here.db", wall_clock_ms=lambda: NOON_5_DEC)
    fast = Store(tmp_path / "fast.db", wall_clock_ms=lambda: NOON_5_DEC + day)
    introduce(here, fast)
    introduce(fast, here)
    site = here.create_site(name="Dates")
    sync_file(here, fast, tmp_path / "a.bwsync")
    beam = fast.save_beam(site.id, glulam(mark="B-1"))
    d = fast.raise_deficiency(site.id, beam, "x", "immediate", "Grid A", "no blocking", "r", "a")
    sync_file(fast, here, tmp_path / "b.bwsync")
    issued = here.issue_notice(site.id, "N-1", b"%PDF-1.4 today", [d.id], "R. Eng", "2026-12-05")
    assert issued.issued_at == "2026-12-05"
