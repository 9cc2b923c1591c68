"""One timestamp form stored (UTC ISO 8601 with 'Z'), older '+00:00' rows still read, local time shown with its zone."""

import re
import time
from datetime import UTC, datetime

import pytest

from storage import Store
from storage.bundle import export_bundle
from storage.stamps import local_time, parse_stamp, utc_stamp

STORED = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ$")  # ISO 8601 basic UTC form, to the second


@pytest.fixture
def vancouver(monkeypatch):
    monkeypatch.setenv("TZ", "America/Vancouver")
    time.tzset()
    yield
    monkeypatch.delenv("TZ")
    time.tzset()


def test_utc_stamp_is_iso_8601_utc_with_z():
    assert utc_stamp(0) == "1970-01-01T00:00:00Z"  # the Unix epoch
    ms = datetime(2026, 12, 2, 4, 56, 6, tzinfo=UTC).timestamp() * 1000  # the standard library's calendar
    assert utc_stamp(ms) == "2026-12-02T04:56:06Z"
    assert STORED.match(utc_stamp())


@pytest.mark.parametrize(
    ("stamp", "expected"),
    [
        ("2026-12-02T04:56:06Z", datetime(2026, 12, 2, 4, 56, 6, tzinfo=UTC)),
        ("2026-12-02T04:56:06+00:00", datetime(2026, 12, 2, 4, 56, 6, tzinfo=UTC)),  # rows before the change
        ("2026-12-02T04:56:06", None),  # no zone: not guessed at
        ("2026-12-02T04:56:06+02:00", None),  # not a form we store
        ("yesterday", None),
    ],
)
def test_parse_stamp_reads_both_stored_forms_only(stamp, expected):
    assert parse_stamp(stamp) == expected


@pytest.mark.usefixtures("vancouver")
def test_local_time_shows_the_zone_for_old_and_new_rows():
    # Pacific Standard Time is UTC-8 in December (tz database)
    assert local_time("2026-12-02T04:56:06Z") == "2026-12-01 20:56 PST"
    assert local_time("2026-12-02T04:56:06+00:00") == "2026-12-01 20:56 PST"
    assert local_time("not a time") == "not a time"


def test_store_writes_the_z_form(tmp_path):
    store = Store(tmp_path / "a.db")
    store.create_site(name="Stamps")
    export_bundle(store, tmp_path / "a.zip")
    assert STORED.match(store.last_sync() or "")
