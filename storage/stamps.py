"""Timestamps: stored as UTC ISO 8601 with a ``Z`` ('2026-12-02T04:56:06Z'), shown in local time with its zone.

One writer (`utc_stamp`) for every stored time; one reader (`parse_stamp`) that also reads the
``+00:00`` form older conflict rows carry, so rows written before the change still read.
"""

from __future__ import annotations

import time
from datetime import UTC, datetime

STORED_FORMAT = "%Y-%m-%dT%H:%M:%SZ"


def utc_stamp(epoch_ms: float | None = None) -> str:
    """A stored time: UTC to the second with a ``Z`` ('2026-12-02T04:56:06Z'); now when epoch_ms is None."""
    seconds = time.time() if epoch_ms is None else epoch_ms / 1000
    return time.strftime(STORED_FORMAT, time.gmtime(seconds))


def parse_stamp(stamp: str) -> datetime | None:
    """A stored UTC time as an aware datetime: the ``Z`` form, or the older ``+00:00`` form; None otherwise.

    A stamp without a zone or with another offset is not one we store, so it is not guessed at.
    """
    text = stamp.strip()
    if text.endswith("Z"):
        text = text[:-1] + "+00:00"
    try:
        when = datetime.fromisoformat(text)
    except ValueError:
        return None
    offset = when.utcoffset()
    if offset is None or offset.total_seconds() != 0:
        return None
    return when.astimezone(UTC)


def local_time(stamp: str) -> str:
    """A stored UTC time in this device's local time with its zone ('2026-12-01 20:56 PST'); else as stored."""
    when = parse_stamp(stamp)
    return stamp if when is None else when.astimezone().strftime("%Y-%m-%d %H:%M %Z")
