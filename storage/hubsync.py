"""The tablet's side of syncing with the office hub, without the HTTP.

What to push, what the hub answered, and applying a pulled page with its cursor in one transaction.

The merge is the one in ``storage.oplog``, the same the hub runs.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from enum import StrEnum
from typing import Any

from storage import identity
from storage.db import SCHEMA_VERSION, transaction
from storage.identity import (
    DEMO_ORIGIN,
    Enrolment,
    SignatureError,
    UnknownDevice,
    ensure_tables,
    op_signatures,
    save_enrolment,
)
from storage.oplog import OP_KEYS, IntegrityError, Op, ProjectionBatch, apply_op, canonical, insert_op
from storage.store import HUB_PEER, Store
from storage.validate import RecordInvalid, check_op_record, reviewer_only

HUB_TABLES = (
    "CREATE TABLE IF NOT EXISTS hub_rejection (origin TEXT NOT NULL, seq INTEGER NOT NULL, reason TEXT NOT NULL, "
    "at_ms INTEGER NOT NULL, PRIMARY KEY (origin, seq))",
    "CREATE TABLE IF NOT EXISTS hub_sync_log (id INTEGER PRIMARY KEY AUTOINCREMENT, at_ms INTEGER NOT NULL, "
    "outcome TEXT NOT NULL, detail TEXT NOT NULL)",
    # why each op in pull_quarantine was set aside (a SetAside value); none for ops set aside before it was kept
    "CREATE TABLE IF NOT EXISTS pull_quarantine_cause (origin TEXT NOT NULL, seq INTEGER NOT NULL, "
    "cause TEXT NOT NULL, PRIMARY KEY (origin, seq))",
)


class SetAside(StrEnum):
    """Why a pulled op was set aside in ``pull_quarantine`` instead of applied."""

    UNLISTED_DEVICE = "unlisted_device"  # no key for its device in the hub's list as fetched: tried again at a sync
    SIGNATURE = "signature"  # its signature does not verify by its device's key (or no key will ever be had)
    RECORD = "record"  # its record fails the checks of a local save
    OFFICE_RULE = "office_rule"  # the office's rules refuse it (a sign-off from a device not enrolled as a reviewer)


class PageRefused(ValueError):
    """A pulled page that does not check out (hash mismatch); nothing was applied."""


def _ensure(store: Store) -> None:
    ensure_tables(store.db)
    for statement in HUB_TABLES:
        store.db.execute(statement)


@dataclass
class Outgoing:
    """Ops to push with their signatures, and how many colleagues' ops could not be relayed."""

    ops: list[tuple[Op, str]]
    unsigned_relays: int


def outgoing(
    store: Store,
    enrolment: Enrolment,
    limit: int = 5000,
    skip: frozenset[tuple[str, int]] = frozenset(),
    include_demo: bool = False,
) -> Outgoing:
    """Ops the hub has not acknowledged (this device's and relayed ones), oldest first, at most ``limit``.

    ``skip``: ops already pushed in this session (the hub refused them; they are not sent twice).
    Changes to the built-in demo site (``DEMO_ORIGIN``) stay on the tablet unless ``include_demo``.
    """
    _ensure(store)
    cursor = dict(store.db.execute("SELECT origin, seq FROM peer_cursor WHERE peer=?", [HUB_PEER]).fetchall())
    rows = store.db.execute(f"SELECT {', '.join(OP_KEYS)} FROM op ORDER BY origin, seq").fetchall()
    ops = [Op.from_row(dict(zip(OP_KEYS, r, strict=True))) for r in rows]
    ops = [o for o in ops if o.seq > cursor.get(o.origin, 0) and (o.origin, o.seq) not in skip]
    if not include_demo:
        ops = [o for o in ops if o.origin != DEMO_ORIGIN]
    signed = set((str(r[0]), int(r[1])) for r in store.db.execute("SELECT origin, seq FROM op_sig").fetchall())
    own = (store.device_id, DEMO_ORIGIN)  # the demo's changes are signed with its marked key when asked
    mine_or_signed = [o for o in ops if o.origin in own or (o.origin, o.seq) in signed]
    mine_or_signed = _relayable(store, mine_or_signed, own)
    chosen = mine_or_signed[:limit]
    try:
        sigs = op_signatures(store.db, chosen, enrolment.key, store.device_id)
    except SignatureError as exc:  # cannot happen for the filtered list; said plainly if it ever does
        msg = f"signing outgoing ops: {exc}"
        raise RuntimeError(msg) from exc
    return Outgoing(list(zip(chosen, sigs, strict=True)), len(ops) - len(mine_or_signed))


def _relayable(store: Store, ops: list[Op], own: tuple[str, ...]) -> list[Op]:
    """Own ops, and colleagues' ops up to the first whose signature does not verify (per origin: no holes).

    A colleague the hub's device list (as last fetched) does not name is left out whole: the hub refuses
    a push holding an op of a device it never enrolled, so one such op would hold back everything else
    (a hub restored from a backup older than that device's enrolment). Its ops wait here until the office
    enrols it again.
    """
    listed = {str(r[0]) for r in store.db.execute("SELECT device_id FROM trusted_device").fetchall()}
    out: list[Op] = []
    stopped: set[str] = set()
    for op in ops:
        if op.origin in stopped:
            continue
        if op.origin not in own and listed and op.origin not in listed:
            stopped.add(op.origin)
            continue
        if op.origin not in own:
            row = store.db.execute("SELECT sig FROM op_sig WHERE origin=? AND seq=?", [op.origin, op.seq]).fetchone()
            if not identity.relayable(store.db, op, str(row[0])):
                stopped.add(op.origin)
                continue
        out.append(op)
    return out


def record_push_answer(store: Store, answer: dict[str, Any], pushed: list[tuple[Op, str]], now_ms: int) -> bool:
    """Move the hub cursor to what the hub holds and keep its refusals for the Sync screen.

    This device's own ops in the push have left it (the hub holds each, merged or refused): the sent
    mark says so, as an export's does, so a restore from a backup never reuses their seqs.

    An answer holding fewer ops of an origin than the hub acknowledged before (``lost_holdings``) means
    the hub was restored: the push cursors drop to what it holds, so the rest of this push carries the
    lost ops again, and the pull starts from the beginning. Returns True then.
    """
    _ensure(store)
    own = [op.seq for op, _ in pushed if op.origin == store.device_id]
    if own:
        store.record_sent(HUB_PEER, max(own))
    lost = bool(lost_holdings(store, answer["seen"]))
    with transaction(store.db):
        if lost:
            _forget(store, answer["seen"])
        for origin, seq in answer["seen"].items():
            store.db.execute("INSERT OR REPLACE INTO peer_cursor VALUES (?, ?, ?)", [HUB_PEER, origin, int(seq)])
        for op, _ in pushed:
            store.db.execute("DELETE FROM hub_rejection WHERE origin=? AND seq=?", [op.origin, op.seq])
        for r in answer["rejected"]:
            store.db.execute(
                "INSERT OR REPLACE INTO hub_rejection VALUES (?, ?, ?, ?)",
                [r["origin"], int(r["seq"]), r["reason"], now_ms],
            )
    return lost


def hub_epoch(store: Store) -> str | None:
    """The hub history (``HubStore.epoch``) this tablet's hub cursors belong to; None before it met one."""
    _ensure(store)
    row = store.db.execute("SELECT value FROM device_key WHERE key='hub_epoch'").fetchone()
    return str(row[0]) if row else None


def meet_hub(store: Store, epoch: str | None, hub_seq: int | None) -> bool:
    """Check the hub's hello against this tablet's cursors; forget them if they belong to another history.

    ``epoch``: the hub's history as its hello names it (None from a hub made before epochs); another one
    than the cursors belong to means the hub was restored from a backup (or is another hub): what it
    acknowledged, and the hub_seq numbers this tablet pulled up to, may name nothing or other ops now.
    ``hub_seq``: the hub's last hub_seq; below the pull cursor, the hub is behind this tablet (a hub
    without epochs gives only this sign). Either way the push cursors and the pull cursor are forgotten
    and the epoch kept, in one transaction; True then (the caller asks the hub what it holds,
    ``adopt_holdings``). The first epoch a tablet meets is kept without forgetting anything.
    """
    held = hub_epoch(store)
    changed = epoch is not None and held is not None and epoch != held
    behind = hub_seq is not None and hub_seq < hub_cursor(store)
    with transaction(store.db):
        if changed or behind:
            _forget(store, {})
        if epoch is not None:
            store.db.execute("INSERT OR REPLACE INTO device_key VALUES ('hub_epoch', ?)", [epoch])
    return changed or behind


def lost_holdings(store: Store, seen: dict[str, Any]) -> list[str]:
    """Origins of which the hub reports holding fewer ops (``seen``) than it acknowledged to this tablet.

    A hub never loses an op it acknowledged unless it was restored from a backup (by hand, say, so that
    its epoch did not change) or failed over to a copy that had not received them.
    """
    acked = store.acknowledged(HUB_PEER)
    return sorted(o for o, seq in acked.items() if int(seq) > int(seen.get(o, 0)))


def adopt_holdings(store: Store, seen: dict[str, Any]) -> None:
    """Take what the hub reports holding (per origin, the unbroken run of seqs) as the push cursors.

    After the cursors were forgotten (``meet_hub``): the next push carries only what the hub lacks.
    """
    with transaction(store.db):
        _forget(store, seen)


def _forget(store: Store, seen: dict[str, Any]) -> None:
    """Push cursors to ``seen`` exactly (down as well as up), the pull cursor to 0 (inside a transaction)."""
    store.db.execute("DELETE FROM peer_cursor WHERE peer=?", [HUB_PEER])
    for origin, seq in seen.items():
        store.db.execute("INSERT INTO peer_cursor VALUES (?, ?, ?)", [HUB_PEER, str(origin), int(seq)])
    store.db.execute("INSERT OR REPLACE INTO device_key VALUES ('hub_cursor', '0')")


def adopt_enrolment(store: Store, hub_url: str, device_id: str, key: Any, bundle_key: str, ca_pem: str = "") -> None:
    """Keep the enrolment and switch file bundles to the firm's key the hub handed over."""
    save_enrolment(store.db, hub_url, device_id, key, ca_pem)
    with transaction(store.db):
        store.db.execute("UPDATE meta SET value=? WHERE key='firm_key'", [bundle_key])


def hub_cursor(store: Store) -> int:
    """The last hub_seq this tablet has applied."""
    _ensure(store)
    row = store.db.execute("SELECT value FROM device_key WHERE key='hub_cursor'").fetchone()
    return int(row[0]) if row else 0


def first_newer_schema(page: dict[str, Any]) -> int | None:
    """Index of the first op of a pulled page written by a newer record schema than this app knows, or None."""
    return next((i for i, o in enumerate(page["ops"]) if int(o["op"]["schema_version"]) > SCHEMA_VERSION), None)


def apply_page(store: Store, page: dict[str, Any], now_ms: int = 0) -> int:
    """Check and apply one pulled page and store its cursor, in one transaction; the number of new ops.

    Each op must verify by its origin device's key as the hub listed it (revoked devices included:
    the hub accepted their ops before the revocation) and its record must pass the checks of a local
    save (``storage.validate``). One that does not is quarantined in ``pull_quarantine`` with the
    reason, never applied; the rest of the page is. An op written by a newer record schema than this
    app knows stops the page there: the ops before it are applied and the cursor stays before it, so
    it and everything after it arrive once the app is updated (``first_newer_schema``).

    This device's own ops coming back as the hub holds them, with other content than held here, mean
    it was restored from a backup and saved before hearing back: as a bundle import does, the hub's
    copies (the ones that were sent) are kept under their seqs and the saves made since the restore
    move past them with fresh stamps (``Store.renumber_own_ops``), to be sent at the next push.
    """
    _ensure(store)
    ops = [Op.from_row(o["op"]) for o in page["ops"]]
    body = canonical([o["op"] for o in page["ops"]]).encode()
    if hashlib.sha256(body).hexdigest() != page["ops_sha256"]:
        msg = "pulled page does not match its checksum; nothing applied"
        raise PageRefused(msg)
    newer = first_newer_schema(page)
    if newer is not None:
        cursor = page["ops"][newer - 1]["hub_seq"] if newer else hub_cursor(store)
        page = dict(page, ops=page["ops"][:newer], next_cursor=cursor)
        ops = ops[:newer]
    signed = [(op, str(o["sig"])) for op, o in zip(ops, page["ops"], strict=True)]
    good, bad = _verified(store, signed)
    try:
        with transaction(store.db):
            own = [op.seq for op, _ in good if op.origin == store.device_id]
            if own:
                _renumber_restored(store, [op for op, _ in good], max(*own, int(page["seen"].get(store.device_id, 0))))
            new = _merge_verified(store, good)
            if own:
                store.resume_seq(max(own))  # its own ops came back: its counters go past them and their numbers
            set_aside(store, bad, now_ms)
            _move_cursors(store, page)
    except IntegrityError as exc:
        msg = f"a change from the office contradicts a record held here, nothing applied: {exc}"
        raise PageRefused(msg) from exc
    return new


def unlisted_origins(store: Store, page: dict[str, Any]) -> set[str]:
    """Devices with ops in a pulled page that the hub's device list, as this tablet last fetched it, did not name.

    Such a device was enrolled after the list was fetched (during this sync, say): fetch it again
    before applying the page. The demo's origin is never listed (only a demo database trusts it).
    """
    out: set[str] = set()
    for origin in {str(o["op"]["origin"]) for o in page["ops"]} - {DEMO_ORIGIN}:
        try:
            identity.trusted_key(store.db, origin, allow_revoked=True)
        except UnknownDevice:
            out.add(origin)
    return out


def retry_set_aside(store: Store) -> list[Op]:
    """Apply the pulled ops set aside because the hub's list did not name their device, if they now check out.

    Call once the device list has been fetched again. Each such op (and any set aside before the cause
    was kept) that now verifies by its origin's key and passes the record checks is applied and leaves
    the quarantine; one that still does not stays, with its reason now. Returns the ops applied.
    """
    _ensure(store)
    rows = store.db.execute(
        "SELECT q.op, q.sig FROM pull_quarantine q LEFT JOIN pull_quarantine_cause c "
        "ON c.origin = q.origin AND c.seq = q.seq WHERE c.cause IS NULL OR c.cause = ? ORDER BY q.origin, q.seq",
        [SetAside.UNLISTED_DEVICE.value],
    ).fetchall()
    if not rows:
        return []
    good, bad = _verified(store, [(Op.from_row(json.loads(text)), str(sig)) for text, sig in rows])
    try:
        with transaction(store.db):
            _merge_verified(store, good)
            for op, _, why, cause in bad:
                store.db.execute(
                    "UPDATE pull_quarantine SET reason=? WHERE origin=? AND seq=?", [why, op.origin, op.seq]
                )
                store.db.execute(
                    "INSERT OR REPLACE INTO pull_quarantine_cause VALUES (?, ?, ?)", [op.origin, op.seq, cause.value]
                )
    except IntegrityError as exc:
        msg = f"a change from the office set aside earlier contradicts a record held here, nothing applied: {exc}"
        raise PageRefused(msg) from exc
    return [op for op, _ in good]


_Bad = tuple[Op, str, str, SetAside]  # an op set aside, its signature, the reason in words, and why as data


def _verified(store: Store, signed: list[tuple[Op, str]]) -> tuple[list[tuple[Op, str]], list[_Bad]]:
    """Split pulled ops into those that verify by their origin's key with a valid record, and those (why) not."""
    keys: dict[str, Any] = {}
    roles: dict[str, str | None] = {}
    good: list[tuple[Op, str]] = []
    bad: list[_Bad] = []
    for op, sig in signed:
        try:
            if op.origin not in keys:
                keys[op.origin] = identity.trusted_key(store.db, op.origin, allow_revoked=True)
            identity.verify_op(keys[op.origin], op, sig)
        except UnknownDevice as exc:
            cause = SetAside.SIGNATURE if op.origin == DEMO_ORIGIN else SetAside.UNLISTED_DEVICE
            bad.append((op, sig, str(exc), cause))
            continue
        except SignatureError as exc:
            bad.append((op, sig, str(exc), SetAside.SIGNATURE))
            continue
        try:
            check_op_record(op)  # the hub checks too; a tablet trusts no single point for what it applies
        except RecordInvalid as exc:
            bad.append((op, sig, f"its record fails the checks of a local save: {exc}", SetAside.RECORD))
            continue
        refused = office_rule(store, op, roles)
        if refused:
            bad.append((op, sig, refused, SetAside.OFFICE_RULE))
            continue
        good.append((op, sig))
    return good, bad


def _renumber_restored(store: Store, ops: list[Op], past: int) -> None:
    """Move this device's saves made since a restore past ``past`` if the page's own ops differ from those held.

    ``past``: the last of its own ops the page brings back, or of the hub's unbroken run of them if later
    (``Store.renumber_own_ops``; inside the caller's transaction, before the page is merged).
    """
    first = store.first_rewritten_seq(ops)
    if first is not None:
        store.renumber_own_ops(first, past, max(op.hlc for op in ops))


def _merge_verified(store: Store, good: list[tuple[Op, str]]) -> int:
    """Merge checked ops and keep their signatures, inside the caller's transaction; the number of new ops.

    An op merged here leaves the quarantine if it was set aside before (pulled again, or retried).
    """
    batch = ProjectionBatch(store.db)
    batch.prefetch([op for op, _ in good])
    newest = 0
    new = 0
    for op, _ in good:
        if insert_op(store.db, op, batch):
            apply_op(store.db, op, batch=batch)
            newest = max(newest, op.hlc)
            new += 1
    batch.flush()
    if new:
        store.observe_hlc(newest)
    keys = [(op.origin, op.seq) for op, _ in good]
    store.db.conn.executemany(
        "INSERT OR IGNORE INTO op_sig VALUES (?, ?, ?)", [(*k, sig) for k, (_, sig) in zip(keys, good, strict=True)]
    )
    store.db.conn.executemany("DELETE FROM pull_quarantine WHERE origin=? AND seq=?", keys)
    store.db.conn.executemany("DELETE FROM pull_quarantine_cause WHERE origin=? AND seq=?", keys)
    return new


def office_rule(store: Store, op: Op, roles: dict[str, str | None] | None = None) -> str | None:
    """Why the office's rules refuse ``op`` as the hub lists its device (``validate.reviewer_only``); None if not.

    This device's own ops are not judged again here (its own saves follow its own enrolment). ``roles``: the
    roles read so far, by device (a caller judging many ops reads each device's once).
    """
    if op.kind != "status" or op.origin == store.device_id:
        return None
    known = {} if roles is None else roles
    if op.origin not in known:
        known[op.origin] = identity.listed_role(store.db, op.origin)
    return reviewer_only(op, known[op.origin])


def set_aside(store: Store, bad: list[_Bad], now_ms: int) -> None:
    """Keep ops that did not check out in ``pull_quarantine``, with the reason and its cause (inside a transaction).

    Pulled ops, and ops of a bundle file the office's rules refuse (``storage.bundle``): the Sync screen lists
    them in words; only those set aside for an unlisted device are tried again (``retry_set_aside``).
    """
    _ensure(store)
    store.db.conn.executemany(
        "INSERT OR REPLACE INTO pull_quarantine VALUES (?, ?, ?, ?, ?, ?)",
        [(op.origin, op.seq, canonical(op.row()), sig, why, now_ms) for op, sig, why, _ in bad],
    )
    store.db.conn.executemany(
        "INSERT OR REPLACE INTO pull_quarantine_cause VALUES (?, ?, ?)",
        [(op.origin, op.seq, cause.value) for op, _, _, cause in bad],
    )


def _move_cursors(store: Store, page: dict[str, Any]) -> None:
    """The page is done: the next pull starts after it, and what the hub holds need not be pushed to it."""
    store.db.execute("INSERT OR REPLACE INTO device_key VALUES ('hub_cursor', ?)", [str(int(page["next_cursor"]))])
    for origin, seq in page["seen"].items():
        store.raise_mark("peer_cursor", HUB_PEER, origin, int(seq))


def pull_quarantine(store: Store) -> list[dict[str, Any]]:
    """Changes pulled from the hub that this tablet did not apply: signature not verified, or record invalid."""
    _ensure(store)
    rows = store.db.execute(
        "SELECT origin, seq, op, reason, at_ms FROM pull_quarantine ORDER BY at_ms, origin, seq"
    ).fetchall()
    out = []
    for origin, seq, op_text, reason, at_ms in rows:
        op = json.loads(op_text)
        out.append(
            {
                "origin": origin,
                "seq": seq,
                "entity": op["entity"],
                "record_id": op["record_id"],
                "kind": op["kind"],
                "reason": reason,
                "at_ms": at_ms,
            }
        )
    return out


def pull_quarantine_words(store: Store) -> list[str]:
    """Each change from the office this tablet set aside, in words: what it was, from which device, why."""
    out = []
    for q in pull_quarantine(store):
        what = f"{q['entity']} {str(q['record_id'])[-6:]}"
        if q["kind"] == "status":
            what = f"status move of deficiency {str(q['record_id'])[-6:]}"
        out.append(
            f"{what} (change {q['seq']} from device {str(q['origin'])[-4:].upper()}): set aside, not applied, "
            f"because {_reason_words(q['reason'])}"
        )
    return out


def _reason_words(reason: str) -> str:
    """A quarantine reason as the end of a sentence: a record that failed its checks, else a signature."""
    if reason.startswith("its record"):
        return reason
    return f"its signature could not be checked: {reason}"


def log_sync(store: Store, outcome: str, detail: str, now_ms: int) -> None:
    """Remember a sync attempt (the Sync screen shows the last one)."""
    _ensure(store)
    with transaction(store.db):
        store.db.execute(
            "INSERT INTO hub_sync_log (at_ms, outcome, detail) VALUES (?, ?, ?)", [now_ms, outcome, detail]
        )


def last_sync(store: Store) -> dict[str, Any] | None:
    """The last sync attempt with the hub: at_ms, outcome ('in_step', 'refused', 'unreachable'), detail."""
    _ensure(store)
    row = store.db.execute("SELECT at_ms, outcome, detail FROM hub_sync_log ORDER BY id DESC LIMIT 1").fetchone()
    return {"at_ms": row[0], "outcome": row[1], "detail": row[2]} if row else None


def rejections(store: Store) -> list[dict[str, Any]]:
    """Changes the hub refused and holds in quarantine, with its reason, and what they were."""
    _ensure(store)
    rows = store.db.execute(
        "SELECT r.origin, r.seq, r.reason, r.at_ms, o.entity, o.record_id, o.kind, o.payload FROM hub_rejection r "
        "LEFT JOIN op o ON o.origin = r.origin AND o.seq = r.seq ORDER BY r.at_ms, r.seq"
    ).fetchall()
    keys = ("origin", "seq", "reason", "at_ms", "entity", "record_id", "kind", "payload")
    out = []
    for r in rows:
        item = dict(zip(keys, r, strict=True))
        item["payload"] = json.loads(item["payload"]) if item["payload"] else {}
        out.append(item)
    return out


def rejection_words(store: Store) -> list[str]:
    """Each change the hub holds back, in words: what it was and why."""
    out = []
    for r in rejections(store):
        what = f"{r['entity'] or 'change'} {str(r['record_id'] or '')[-6:]}"
        if r["kind"] == "status":
            what = f"status move of deficiency {str(r['record_id'])[-6:]} to stage {r['payload'].get('stage')}"
        why = r["reason"].split(": ", 1)[1] if ": " in r["reason"] else r["reason"]
        out.append(f"{what} (change {r['seq']}): {why}")
    return out
