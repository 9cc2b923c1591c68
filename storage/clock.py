"""Record ids (UUIDv7) and the hybrid logical clock (48-bit ms, 16-bit counter)."""

from __future__ import annotations

import os
import time
import uuid


def uuid7(now_ms: int | None = None) -> str:
    """A UUIDv7 (RFC 9562): 48-bit Unix ms, version 7, variant 10, random bits; as text."""
    ms = int(time.time() * 1000) if now_ms is None else now_ms
    rand = int.from_bytes(os.urandom(10), "big")
    value = (
        (ms & 0xFFFF_FFFF_FFFF) << 80
        | 0x7 << 76
        | ((rand >> 68) & 0xFFF) << 64
        | 0b10 << 62
        | (rand & 0x3FFF_FFFF_FFFF_FFFF)
    )
    return str(uuid.UUID(int=value))


MAX_DRIFT_MS = 10 * 60 * 1000
# Stamps are stored in SQLite's signed 64-bit integers: 46 bits of ms (to the year 4199) and the counter.
HLC_MAX = (1 << 62) - 1


def hlc_tick(last: int, wall_ms: int) -> int:
    """HLC for a local event: max(last, wall) with the counter reset when the wall clock moved ahead."""
    physical = last >> 16
    if wall_ms > physical:
        return wall_ms << 16
    return last + 1


def hlc_receive(last: int, remote: int, wall_ms: int) -> int:
    """HLC after receiving a remote stamp: past every stamp seen, up to MAX_DRIFT_MS ahead of the wall clock.

    A stamp further ahead (written on a device whose clock is fast) is accepted and flagged by the import
    (``far_ahead_ms``) but not followed (sync.md 3.3): this device's own stamps stay near its wall clock, so
    the hub does not hold its work back as 'clock ahead'. Its own edit of a field that carries such a stamp
    still takes effect: the save stamps that one change past the field's stamp (``Store._save_in_tx``).
    """
    cap = (wall_ms + MAX_DRIFT_MS) << 16
    return hlc_tick(max(last, min(remote, cap)), wall_ms)


def far_ahead_ms(remote: int, wall_ms: int) -> int:
    """How far (ms) a stamp's physical time is ahead of the wall clock beyond MAX_DRIFT_MS (0 if not)."""
    return max(0, (remote >> 16) - wall_ms - MAX_DRIFT_MS)
