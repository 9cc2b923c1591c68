"""Device identity: an Ed25519 key pair per device, op signatures, signed HTTP requests.

Each tablet makes its own key pair when it enrols at the office hub; the private key never leaves
the device database. Every op a device saves is signed by its origin device (``sign_op``) over the
op's canonical JSON, so the hub, and anyone holding the origin's public key, can check that an op
relayed by another device is exactly what its origin wrote (``verify_op``).
"""

from __future__ import annotations

import base64
import hashlib
import time
from dataclasses import dataclass
from typing import Any

import sqlite_utils
from cryptography.exceptions import InvalidSignature
from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey, Ed25519PublicKey

from storage.db import MIGRATIONS, apply_statement, transaction
from storage.oplog import Op, canonical

# How far a signed request's time may be from the hub's clock (milliseconds).
REQUEST_WINDOW_MS = 10 * 60 * 1000

IDENTITY_TABLES = (*MIGRATIONS[5], *MIGRATIONS[8])  # created by the migrations; kept idempotent for hub databases
# DEMO ONLY: the marked key that signs the built-in demo's bundles. Its private half is in the source, so
# only a demo database (firm key DEMO_FIRM_KEY) trusts it; a real database never does.
DEMO_KEY_SEED = hashlib.sha256(b"bracewalk demo device key - DEMO ONLY, never a firm's").digest()
# DEMO ONLY: the origin of every change to the built-in demo site, whatever device makes it. Its ops leave a
# device (bundle or hub) only when asked, so the demo never mixes with a firm's work.
DEMO_ORIGIN = "00000000-0000-4000-8000-00000000de30"


def demo_key() -> Ed25519PrivateKey:
    """The marked demo key (DEMO ONLY: its private half is in the source)."""
    return Ed25519PrivateKey.from_private_bytes(DEMO_KEY_SEED)


class SignatureError(ValueError):
    """A signature that does not verify, or a key that cannot be read."""


def b64(data: bytes) -> str:
    """URL-safe base64 without padding."""
    return base64.urlsafe_b64encode(data).decode().rstrip("=")


def unb64(text: str) -> bytes:
    """Inverse of ``b64``; raises SignatureError on text that is not base64."""
    try:
        return base64.urlsafe_b64decode(text + "=" * (-len(text) % 4))
    except (ValueError, TypeError) as exc:
        msg = f"not base64: {text[:20]!r}"
        raise SignatureError(msg) from exc


def new_private_key() -> Ed25519PrivateKey:
    """A fresh random Ed25519 private key."""
    return Ed25519PrivateKey.generate()


def private_bytes(key: Ed25519PrivateKey) -> bytes:
    """The 32 raw bytes of a private key."""
    return key.private_bytes(serialization.Encoding.Raw, serialization.PrivateFormat.Raw, serialization.NoEncryption())


def public_text(key: Ed25519PrivateKey | Ed25519PublicKey) -> str:
    """The public key as base64 text (32 raw bytes)."""
    pub = key.public_key() if isinstance(key, Ed25519PrivateKey) else key
    return b64(pub.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw))


def load_public(text: str) -> Ed25519PublicKey:
    """Read a public key written by ``public_text``."""
    raw = unb64(text)
    if len(raw) != 32:
        msg = f"public key is {len(raw)} bytes; Ed25519 keys are 32"
        raise SignatureError(msg)
    return Ed25519PublicKey.from_public_bytes(raw)


def op_message(op: Op) -> bytes:
    """The bytes an op signature covers: the op's canonical JSON (payload and base as objects)."""
    row = op.row()
    row["payload"], row["base"] = op.payload, op.base
    return b"bracewalk-op/1\n" + canonical(row).encode()


def sign_op(key: Ed25519PrivateKey, op: Op) -> str:
    """Signature of an op by its origin device."""
    return b64(key.sign(op_message(op)))


def verify_op(public: Ed25519PublicKey, op: Op, sig: str) -> None:
    """Raise SignatureError unless ``sig`` is the origin's signature of exactly this op."""
    try:
        public.verify(unb64(sig), op_message(op))
    except InvalidSignature as exc:
        msg = f"op {op.origin[:8]}:{op.seq} signature does not verify"
        raise SignatureError(msg) from exc


def request_message(method: str, path: str, timestamp_ms: int, body: bytes) -> bytes:
    """What a signed HTTP request covers: method, path with query, time and the body's SHA-256."""
    return f"bracewalk-request/1\n{method.upper()}\n{path}\n{timestamp_ms}\n{hashlib.sha256(body).hexdigest()}".encode()


def sign_request(
    key: Ed25519PrivateKey, device_id: str, method: str, path: str, body: bytes, offset_ms: int = 0
) -> dict[str, str]:
    """Headers that authenticate one request by a device.

    ``offset_ms``: the hub's clock minus this device's, as the session's hello measured it; the request is
    timed by the hub's clock, so a tablet whose clock is off (set by hand on site, a flat clock battery)
    still syncs, while a replayed request still falls outside the hub's window.
    """
    now = int(time.time() * 1000) + offset_ms
    sig = b64(key.sign(request_message(method, path, now, body)))
    return {"X-Bracewalk-Device": device_id, "X-Bracewalk-Time": str(now), "X-Bracewalk-Signature": sig}


def verify_request(
    public: Ed25519PublicKey, method: str, path: str, timestamp_ms: int, body: bytes, sig: str, now_ms: int
) -> None:
    """Raise SignatureError unless the request is signed by this key and made within the window."""
    if abs(now_ms - timestamp_ms) > REQUEST_WINDOW_MS:
        msg = f"request time {timestamp_ms} is more than 10 minutes from the hub's clock {now_ms}"
        raise SignatureError(msg)
    try:
        public.verify(unb64(sig), request_message(method, path, timestamp_ms, body))
    except InvalidSignature as exc:
        msg = "request signature does not verify"
        raise SignatureError(msg) from exc


@dataclass(frozen=True)
class Enrolment:
    """What a tablet holds once enrolled: the hub's address, its device id at the hub, and its key."""

    hub_url: str
    device_id: str
    key: Ed25519PrivateKey
    ca_pem: str = ""  # the office's own certificate, trusted for this hub only (self-signed TLS)
    clock_offset_ms: int = 0  # the hub's clock minus this tablet's, learnt from the hub's hello: requests' time


def ensure_tables(db: sqlite_utils.Database) -> None:
    """Create the identity tables on a device database (idempotent)."""
    for statement in IDENTITY_TABLES:
        apply_statement(db, statement)


def _get(db: sqlite_utils.Database, name: str) -> str | None:
    row = db.execute("SELECT value FROM device_key WHERE key=?", [name]).fetchone()
    return str(row[0]) if row else None


def enrolment(db: sqlite_utils.Database) -> Enrolment | None:
    """The enrolment of this device, or None if it has not enrolled at a hub."""
    ensure_tables(db)
    url, device, raw = _get(db, "hub_url"), _get(db, "hub_device_id"), _get(db, "private_key")
    if not (url and device and raw):
        return None
    return Enrolment(url, device, Ed25519PrivateKey.from_private_bytes(unb64(raw)), _get(db, "hub_ca") or "")


def save_enrolment(
    db: sqlite_utils.Database, hub_url: str, device_id: str, key: Ed25519PrivateKey, ca_pem: str = ""
) -> None:
    """Keep the enrolment (in one transaction); ``ca_pem``: the office certificate to trust, if self-signed."""
    ensure_tables(db)
    with transaction(db):
        for name, value in {
            "hub_url": hub_url,
            "hub_device_id": device_id,
            "private_key": b64(private_bytes(key)),
            "hub_ca": ca_pem,
        }.items():
            db.execute("INSERT OR REPLACE INTO device_key VALUES (?, ?)", [name, value])


def op_signatures(db: sqlite_utils.Database, ops: list[Op], key: Ed25519PrivateKey, self_origin: str) -> list[str]:
    """Signatures of ``ops``: stored ones, or signed now (and stored) for this device's own ops.

    Ops of other origins must carry the signature their origin made (relayed as received); changes to
    the demo site (``DEMO_ORIGIN``, sent only when asked) are signed with the marked demo key.
    """
    ensure_tables(db)
    out = []
    with transaction(db):
        for op in ops:
            row = db.execute("SELECT sig FROM op_sig WHERE origin=? AND seq=?", [op.origin, op.seq]).fetchone()
            if row:
                out.append(str(row[0]))
                continue
            if op.origin not in (self_origin, DEMO_ORIGIN):
                msg = f"op {op.origin[:8]}:{op.seq} of another device has no signature to relay"
                raise SignatureError(msg)
            sig = sign_op(key if op.origin == self_origin else demo_key(), op)
            db.execute("INSERT INTO op_sig VALUES (?, ?, ?)", [op.origin, op.seq, sig])
            out.append(sig)
    return out


def device_key(db: sqlite_utils.Database) -> Ed25519PrivateKey:
    """The device's own Ed25519 key: made at random on first use and kept in the database (never sent).

    A demo database (firm key ``DEMO_FIRM_KEY``) signs with the marked demo key instead.
    """
    ensure_tables(db)
    if _is_demo(db):
        return demo_key()
    raw = _get(db, "private_key")
    if raw:
        return Ed25519PrivateKey.from_private_bytes(unb64(raw))
    key = new_private_key()
    with transaction(db):
        db.execute("INSERT OR IGNORE INTO device_key VALUES ('private_key', ?)", [b64(private_bytes(key))])
    raw = _get(db, "private_key")  # another connection may have made one first: use the stored one
    assert raw is not None
    return Ed25519PrivateKey.from_private_bytes(unb64(raw))


def _is_demo(db: sqlite_utils.Database) -> bool:
    from storage.store import DEMO_FIRM_KEY

    row = db.execute("SELECT value FROM meta WHERE key='firm_key'").fetchone()
    return bool(row) and row[0] == DEMO_FIRM_KEY


def own_device_id(db: sqlite_utils.Database) -> str:
    """The id of the device whose database this is."""
    row = db.execute("SELECT value FROM meta WHERE key='device_id'").fetchone()
    return str(row[0]) if row else ""


@dataclass(frozen=True)
class TrustedDevice:
    """An enrolled device as the office hub listed it to this tablet."""

    device_id: str
    public_key: str
    name: str
    revoked_ms: int | None


def trust_devices(db: sqlite_utils.Database, devices: list[dict[str, Any]], at_ms: int) -> int:
    """Replace the known devices with the hub's list (device_id, public_key, name, revoked_ms, role); how many.

    Keys are checked before anything is written: a list with an unreadable key changes nothing.
    """
    ensure_tables(db)
    rows = []
    roles = []
    for d in devices:
        load_public(str(d["public_key"]))
        revoked = d.get("revoked_ms")
        rows.append([str(d["device_id"]), str(d["public_key"]), str(d.get("name", "")), revoked, at_ms])
        if d.get("role"):  # a hub from before 2026-12-05 lists no roles: none is known then
            roles.append([str(d["device_id"]), str(d["role"])])
    with transaction(db):
        db.execute("DELETE FROM trusted_device")
        db.conn.executemany("INSERT INTO trusted_device VALUES (?, ?, ?, ?, ?)", rows)
        db.execute("DELETE FROM trusted_role")
        db.conn.executemany("INSERT INTO trusted_role VALUES (?, ?)", roles)
    return len(rows)


def listed_role(db: sqlite_utils.Database, device_id: str) -> str | None:
    """The role the office enrolled a listed device for ('reviewer', 'technician', 'office'); None if not known."""
    ensure_tables(db)
    row = db.execute("SELECT role FROM trusted_role WHERE device_id=?", [device_id]).fetchone()
    return str(row[0]) if row else None


def trusted_devices(db: sqlite_utils.Database) -> list[TrustedDevice]:
    """The devices this tablet knows from the hub, by name."""
    ensure_tables(db)
    rows = db.execute("SELECT device_id, public_key, name, revoked_ms FROM trusted_device ORDER BY name").fetchall()
    return [TrustedDevice(*r) for r in rows]


class UnknownDevice(SignatureError):
    """A device this tablet has no enrolled key for (not listed by the hub)."""


class RevokedDevice(SignatureError):
    """A device the office has revoked."""


def trusted_key(db: sqlite_utils.Database, device_id: str, allow_revoked: bool = False) -> Ed25519PublicKey:
    """The public key to verify ``device_id`` by: this device's own, or one the hub listed.

    Raises UnknownDevice for a device the hub never listed, RevokedDevice for a revoked one (unless
    ``allow_revoked``: ops the hub accepted before the revocation). A demo database trusts the demo key.
    """
    ensure_tables(db)
    if device_id == own_device_id(db):
        return device_key(db).public_key()
    if device_id == DEMO_ORIGIN:
        if _is_demo(db):
            return demo_key().public_key()
        msg = "changes to the built-in demo site are accepted only by a demo database"
        raise UnknownDevice(msg)
    row = db.execute("SELECT public_key, revoked_ms FROM trusted_device WHERE device_id=?", [device_id]).fetchone()
    if row is None:
        if _is_demo(db):
            return demo_key().public_key()
        msg = f"device {device_id[:40]} is not enrolled at the office hub this tablet knows (sync with the hub first)"
        raise UnknownDevice(msg)
    if row[1] is not None and not allow_revoked:
        msg = f"device {device_id[:40]} was revoked at the office"
        raise RevokedDevice(msg)
    return load_public(str(row[0]))


def relayable(db: sqlite_utils.Database, op: Op, sig: str) -> bool:
    """Whether a held signature may be relayed: checked on arrival, or checked now by the origin's key.

    A signature that arrived unchecked (its op came from its own origin, covered by that device's bundle
    signature) is verified the first time the op is relayed; a bad one is never passed on.
    """
    if db.execute("SELECT 1 FROM op_sig_unchecked WHERE origin=? AND seq=?", [op.origin, op.seq]).fetchone() is None:
        return True
    try:
        verify_op(trusted_key(db, op.origin, allow_revoked=True), op, sig)
    except SignatureError:
        return False
    with transaction(db):
        db.execute("DELETE FROM op_sig_unchecked WHERE origin=? AND seq=?", [op.origin, op.seq])
    return True


def store_signatures(db: sqlite_utils.Database, sigs: list[dict[str, Any]]) -> None:
    """Keep signatures of ops received from the hub, so they can be relayed (inside the caller's transaction)."""
    for s in sigs:
        db.execute("INSERT OR IGNORE INTO op_sig VALUES (?, ?, ?)", [s["origin"], int(s["seq"]), s["sig"]])
