"""The rules the hub enforces on every op, whatever the pushing device claims.

Each check returns the reason an op is refused (words a person can read), or None. A refused op is
quarantined on the hub and reported back to the device that pushed it; it is never dropped.
"""

from __future__ import annotations

from dataclasses import dataclass

from storage.clock import MAX_DRIFT_MS
from storage.oplog import Op, content_hash
from storage.validate import STAGE_VERIFIED, RecordInvalid, check_op_record, reviewer_only

STATUS_FIELDS = ("cycle", "stage")


@dataclass(frozen=True)
class Context:
    """What the hub knows when it judges one op."""

    origin_role: str  # the enrolled role of the op's origin device
    origin_revoked: bool
    hub_now_ms: int
    stored_hash: str | None  # content hash of an insert-only record already held under this id
    current_status: tuple[int, int]  # the hub's (cycle, stage) for a deficiency, (0, 0) if none
    origin_last_status: tuple[int, int] | None  # this origin's latest status for the record at the hub


def clock_ahead(op: Op, ctx: Context) -> str | None:
    """Ops stamped more than 10 minutes ahead of the hub's clock are held (sync.md 3.3)."""
    physical = op.hlc >> 16
    if physical > ctx.hub_now_ms + MAX_DRIFT_MS:
        minutes = (physical - ctx.hub_now_ms) / 60000
        return f"clock_ahead: stamped {minutes:.0f} min ahead of the office clock; fix the tablet's clock, sync again"
    return None


def origin_revoked(op: Op, ctx: Context) -> str | None:
    """A revoked device's new ops are refused, even when another device relays them."""
    return "revoked: the device that wrote this change has been revoked at the office" if ctx.origin_revoked else None


def status_only_by_status_ops(op: Op, ctx: Context) -> str | None:
    """A deficiency's cycle and stage change only through status ops (the forward-only lattice)."""
    if op.kind == "set" and op.entity == "deficiency" and any(f in op.payload for f in STATUS_FIELDS):
        return "status_by_edit: a deficiency's status changes only by a status move, never by an edit"
    return None


def only_reviewer_verifies(op: Op, ctx: Context) -> str | None:
    """Only a device enrolled with the reviewer role may set a deficiency verified (the tablets' rule too)."""
    return reviewer_only(op, ctx.origin_role)


def status_forward_only(op: Op, ctx: Context) -> str | None:
    """Status moves forward: stage 0-2, a reopen is exactly one cycle on, a device never goes back."""
    if op.kind != "status":
        return None
    try:
        cycle, stage = int(op.payload["cycle"]), int(op.payload["stage"])
    except (KeyError, TypeError, ValueError):
        return "bad_status: a status move needs whole-number cycle and stage"
    if not 0 <= stage <= STAGE_VERIFIED or cycle < 0:
        return f"bad_status: stage {stage} / cycle {cycle}; allowed stage 0-2, cycle >= 0"
    if cycle > ctx.current_status[0] + 1:
        return f"status_skips_cycle: cycle {cycle} after cycle {ctx.current_status[0]}; a reopen adds one cycle"
    if ctx.origin_last_status is not None and (cycle, stage) <= ctx.origin_last_status:
        return (
            f"status_backward: this device already moved the item to {ctx.origin_last_status}; "
            f"({cycle}, {stage}) would move it back"
        )
    return None


def immutable_unchanged(op: Op, ctx: Context) -> str | None:
    """Measurements, photos and issued notices are insert-only: the same id must carry the same content."""
    if op.kind == "insert" and ctx.stored_hash is not None and ctx.stored_hash != content_hash(op.payload):
        return f"immutable: {op.entity} {op.record_id[-8:]} is already held with different content"
    return None


def record_valid(op: Op, ctx: Context) -> str | None:
    """The op's record passes the same checks as a local save and a bundle import (``storage.validate``)."""
    del ctx  # the record alone decides
    try:
        check_op_record(op)
    except RecordInvalid as exc:
        return f"invalid_record: {exc}"
    return None


RULES = (
    origin_revoked,
    clock_ahead,
    status_only_by_status_ops,
    only_reviewer_verifies,
    status_forward_only,
    immutable_unchanged,
    record_valid,  # last: a rule above names what is wrong more precisely (a status set by an edit, say)
)


def judge(op: Op, ctx: Context) -> str | None:
    """The first rule that refuses the op, or None if it may be merged."""
    for rule in RULES:
        reason = rule(op, ctx)
        if reason:
            return reason
    return None


def describe(reason: str) -> str:
    """The reason without its code, for a person."""
    return reason.split(": ", 1)[1] if ": " in reason else reason


__all__ = ["RULES", "Context", "describe", "judge"]
