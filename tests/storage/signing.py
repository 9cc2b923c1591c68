"""Test helpers: bundles written as a trusted device would sign them, and tablets told each other's keys.

A forged bundle that tests the checks after the signature (records, ranges, limits) must be signed by
a key the receiver trusts, like a bundle from an enrolled device gone wrong; a tampered one is not.
"""

from __future__ import annotations

import hashlib
import io
import zipfile
from typing import Any

from storage import identity
from storage.bundle import MANIFEST_SIG_PREFIX, OP_SIG_PREFIX
from storage.oplog import canonical


def signed_bundle(store: Any, manifest: dict[str, Any], ops: list[dict[str, Any]], blobs: dict[str, bytes]) -> bytes:
    """A bundle of ``ops`` (as dicts) signed with ``store``'s device key: manifest hashes filled in."""
    return sign_bundle(identity.device_key(store.db), manifest, ops, blobs)


def sign_bundle(
    key: Any, manifest: dict[str, Any], ops: list[dict[str, Any]], blobs: dict[str, bytes], wrong_op_sig: int = -1
) -> bytes:
    """A bundle of ``ops`` with the manifest and every op signed by ``key`` (an Ed25519 private key).

    ``wrong_op_sig``: the index of one op signed by another key instead (the manifest still by ``key``).
    """
    lines = [canonical(o) for o in ops]
    body = "".join(line + "\n" for line in lines).encode()
    other = identity.new_private_key()
    sigs = "".join(
        identity.b64((other if n == wrong_op_sig else key).sign(OP_SIG_PREFIX + line.encode())) + "\n"
        for n, line in enumerate(lines)
    ).encode()
    manifest = dict(manifest, ops_sha256=hashlib.sha256(body).hexdigest(), sigs_sha256=hashlib.sha256(sigs).hexdigest())
    mbytes = canonical(manifest).encode()
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as out:
        out.writestr("manifest.json", mbytes)
        out.writestr("manifest.sig", identity.b64(key.sign(MANIFEST_SIG_PREFIX + mbytes)))
        out.writestr("ops.jsonl", body)
        out.writestr("ops.sig", sigs)
        for name, content in blobs.items():
            out.writestr(name, content)
    return buf.getvalue()


def introduce(receiver: Any, *senders: Any, revoked: tuple[Any, ...] = ()) -> None:
    """Tell ``receiver`` the senders' public keys as a hub lists them (``revoked``: listed as revoked)."""
    devices = [
        {
            "device_id": s.device_id,
            "public_key": identity.public_text(identity.device_key(s.db)),
            "name": s.device_code,
            "revoked_ms": 1 if s in revoked else None,
        }
        for s in (*senders, *revoked)
    ]
    identity.trust_devices(receiver.db, devices, at_ms=0)


def listing(store: Any) -> dict[str, Any]:
    """``store``'s entry in a hub's device list (to trust it in another process)."""
    public = identity.public_text(identity.device_key(store.db))
    return {"device_id": store.device_id, "public_key": public, "name": "src"}
