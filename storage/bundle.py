"""Sync bundles: one zip file with an HMAC-covered manifest, the ops as JSON lines, and the blobs.

Import verifies everything before the first write (size, exact entry names, MAC, hashes, op keys,
contiguous ranges, no gap against what this database holds), then applies in one transaction.
A bundle written by a newer schema is held, not applied. Every attempt is logged.
"""

from __future__ import annotations

import hashlib
import hmac
import io
import json
import os
import time
import zipfile
import zlib
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from storage.db import SCHEMA_VERSION, transaction
from storage.oplog import OP_KEYS, IntegrityError, Op, ProjectionBatch, apply_op, canonical, insert_op
from storage.store import Store

FORMAT = "bracewalk-bundle"
FORMAT_VERSION = 1
MAX_BUNDLE_BYTES = 512 * 1024 * 1024
MAX_ENTRY_BYTES = 256 * 1024 * 1024
MANIFEST_KEYS = {
    "format",
    "format_version",
    "schema_version",
    "origin",
    "created_ms",
    "ranges",
    "op_count",
    "ops_sha256",
    "blobs",
    "vector",
}


Progress = Callable[[float, str], None]
# What zipfile and zlib raise on damaged input: a flipped flag bit reads as "encrypted"
# (RuntimeError) or an unknown method or version (NotImplementedError); found by flipping every byte.
ZIP_ERRORS = (
    zipfile.BadZipFile,
    zipfile.LargeZipFile,
    OSError,
    EOFError,
    ValueError,
    KeyError,
    NotImplementedError,
    RuntimeError,
    zlib.error,
)
PROGRESS_EVERY = 250


def _silent(fraction: float, what: str) -> None:
    """No progress display."""


class BundleRefused(Exception):
    """A bundle that failed verification; nothing was written."""


@dataclass
class ImportReport:
    """What an import did."""

    outcome: str  # "applied", "held", "refused"
    ops_total: int = 0
    ops_new: int = 0
    blobs_new: int = 0
    conflicts_new: int = 0
    reason: str = ""
    origins: dict[str, list[int]] = field(default_factory=dict)


def _now() -> str:
    return time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime())


def export_bundle(
    store: Store, out: str | Path, peer: str | None = None, progress: Progress | None = None
) -> dict[str, Any]:
    """Write the ops ``peer`` has not seen (all ops when peer is None) and their blobs to ``out``.

    ``progress(fraction, what)`` is called as the work goes (for a progress bar).
    """
    tell = progress or _silent
    tell(0.0, "reading changes")
    cursor: dict[str, int] = {}
    if peer:
        cursor = dict(store.db.execute("SELECT origin, seq FROM peer_cursor WHERE peer=?", [peer]).fetchall())
    rows = store.db.execute(f"SELECT {', '.join(OP_KEYS)} FROM op ORDER BY origin, seq").fetchall()
    ops = [dict(zip(OP_KEYS, r, strict=True)) for r in rows]
    ops = [o for o in ops if o["seq"] > cursor.get(o["origin"], 0)]
    lines = []
    ranges: dict[str, list[int]] = {}
    shas: set[str] = set()
    for n, o in enumerate(ops):
        if n % PROGRESS_EVERY == 0:
            tell(0.8 * n / len(ops), f"packing change {n:,} of {len(ops):,}")
        o["payload"], o["base"] = json.loads(o["payload"]), json.loads(o["base"])
        lines.append(canonical(o))
        r = ranges.setdefault(o["origin"], [o["seq"], o["seq"]])
        r[1] = o["seq"]
        for key in ("sha256", "pdf_sha256", "evidence_sha256"):
            sha = o["payload"].get(key)
            if sha and store.blob_path(sha).exists():
                shas.add(sha)
    body = ("\n".join(lines) + ("\n" if lines else "")).encode()
    blobs: list[dict[str, Any]] = [{"sha256": s, "size": store.blob_path(s).stat().st_size} for s in sorted(shas)]
    vector = dict(store.db.execute("SELECT origin, seq FROM seen").fetchall())
    manifest = {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "schema_version": SCHEMA_VERSION,
        "origin": store.device_id,
        "created_ms": int(time.time() * 1000),
        "ranges": ranges,
        "op_count": len(lines),
        "ops_sha256": hashlib.sha256(body).hexdigest(),
        "blobs": blobs,
        "vector": vector,
    }
    mbytes = canonical(manifest).encode()
    mac = hmac.new(store.firm_key, mbytes, hashlib.sha256).hexdigest()
    out = Path(out)
    tell(0.8, f"writing {out.name}")
    tmp = out.with_name(out.name + ".part")
    with zipfile.ZipFile(tmp, "w", compression=zipfile.ZIP_DEFLATED) as z:
        z.writestr("manifest.json", mbytes)
        z.writestr("manifest.mac", mac)
        z.writestr("ops.jsonl", body)
        for b in blobs:
            z.write(store.blob_path(str(b["sha256"])), f"blobs/{b['sha256']}")
    with open(tmp, "rb") as fh:
        os.fsync(fh.fileno())
    os.replace(tmp, out)
    with transaction(store.db):
        store.db.execute(
            "INSERT INTO bundle_log (at, file, bundle_sha256, outcome, reason, ops, applied) "
            "VALUES (?, ?, ?, 'exported', '', ?, 0)",
            [_now(), str(out), hashlib.sha256(out.read_bytes()).hexdigest(), len(lines)],
        )
        if peer:
            for origin, (_, last) in ranges.items():
                store.db.execute("INSERT OR REPLACE INTO peer_cursor VALUES (?, ?, ?)", [peer, origin, last])
    tell(1.0, f"wrote {len(lines):,} changes")
    return manifest


@dataclass
class _Verified:
    manifest: dict[str, Any]
    ops: list[Op]
    blobs: dict[str, bytes]
    sha: str


def verify_bundle(store: Store, data: bytes) -> _Verified:
    """Check a bundle completely without writing; raise BundleRefused with the reason."""
    if len(data) > MAX_BUNDLE_BYTES:
        raise BundleRefused(f"bundle is {len(data)} bytes; limit {MAX_BUNDLE_BYTES}")
    try:
        z = zipfile.ZipFile(io.BytesIO(data))
        infos = z.infolist()
    except ZIP_ERRORS as exc:
        raise BundleRefused(f"not a readable bundle: {exc}") from exc
    names = [i.filename for i in infos]
    if len(names) != len(set(names)):
        raise BundleRefused("duplicate entries in bundle")
    for info in infos:
        if info.file_size > MAX_ENTRY_BYTES:
            raise BundleRefused(f"entry {info.filename} too large")
    for required in ("manifest.json", "manifest.mac", "ops.jsonl"):
        if required not in names:
            raise BundleRefused(f"missing entry {required}")
    try:
        mbytes = z.read("manifest.json")
        mac = z.read("manifest.mac").decode("ascii").strip()
    except ZIP_ERRORS as exc:
        raise BundleRefused(f"unreadable manifest: {exc}") from exc
    expected = hmac.new(store.firm_key, mbytes, hashlib.sha256).hexdigest()
    if not hmac.compare_digest(mac, expected):
        raise BundleRefused("manifest MAC does not verify (tampered, or another firm's key)")
    try:
        manifest = json.loads(mbytes)
    except ValueError as exc:
        raise BundleRefused(f"manifest is not JSON: {exc}") from exc
    if not isinstance(manifest, dict) or set(manifest) != MANIFEST_KEYS:
        raise BundleRefused("manifest keys differ from the format")
    if manifest["format"] != FORMAT or manifest["format_version"] != FORMAT_VERSION:
        raise BundleRefused(f"unknown format {manifest['format']!r} v{manifest['format_version']}")
    blob_names = {f"blobs/{b['sha256']}" for b in manifest["blobs"]}
    if set(names) != {"manifest.json", "manifest.mac", "ops.jsonl"} | blob_names:
        raise BundleRefused("bundle entries differ from the manifest")
    try:
        body = z.read("ops.jsonl")
        blobs = {b["sha256"]: z.read(f"blobs/{b['sha256']}") for b in manifest["blobs"]}
    except ZIP_ERRORS as exc:
        raise BundleRefused(f"unreadable entry: {exc}") from exc
    if hashlib.sha256(body).hexdigest() != manifest["ops_sha256"]:
        raise BundleRefused("ops hash does not match the manifest")
    for sha, content in blobs.items():
        if hashlib.sha256(content).hexdigest() != sha:
            raise BundleRefused(f"blob {sha[:12]} does not match its hash")
    ops = []
    try:
        for line in body.decode().splitlines():
            ops.append(Op.from_row(json.loads(line)))
    except (ValueError, KeyError, TypeError) as exc:
        raise BundleRefused(f"bad op line: {exc}") from exc
    if len(ops) != manifest["op_count"]:
        raise BundleRefused("op count differs from the manifest")
    _check_ranges(store, manifest, ops)
    return _Verified(manifest, ops, blobs, hashlib.sha256(data).hexdigest())


def _check_ranges(store: Store, manifest: dict[str, Any], ops: list[Op]) -> None:
    by_origin: dict[str, list[int]] = {}
    for op in ops:
        by_origin.setdefault(op.origin, []).append(op.seq)
    if {k: [v[0], v[-1]] for k, v in by_origin.items()} != manifest["ranges"]:
        raise BundleRefused("op ranges differ from the manifest")
    seen = dict(store.db.execute("SELECT origin, seq FROM seen").fetchall())
    for origin, seqs in by_origin.items():
        if seqs != list(range(seqs[0], seqs[-1] + 1)):
            raise BundleRefused(f"ops of {origin[:8]} are not contiguous")
        if seqs[0] > seen.get(origin, 0) + 1:
            raise BundleRefused(
                f"gap: this database holds {origin[:8]} up to {seen.get(origin, 0)}, bundle starts "
                f"at {seqs[0]}; import the earlier bundle first"
            )


def import_bundle(store: Store, path: str | Path, progress: Progress | None = None) -> ImportReport:
    """Verify then apply a bundle in one transaction; log the attempt whatever its outcome.

    ``progress(fraction, what)`` is called as the work goes (for a progress bar).
    """
    tell = progress or _silent
    tell(0.0, "verifying")
    data = Path(path).read_bytes()
    try:
        v = verify_bundle(store, data)
    except BundleRefused as exc:
        _log(store, path, hashlib.sha256(data).hexdigest(), "refused", str(exc), 0, 0)
        return ImportReport("refused", reason=str(exc))
    tell(0.2, f"verified {len(v.ops):,} changes and {len(v.blobs)} files")
    if v.manifest["schema_version"] > SCHEMA_VERSION:
        held = store.blob_dir / "held" / f"{v.sha}.zip"
        held.parent.mkdir(parents=True, exist_ok=True)
        held.write_bytes(data)
        with transaction(store.db):
            store.db.execute(
                "INSERT OR REPLACE INTO held_bundle VALUES (?, ?, ?)", [v.sha, v.manifest["schema_version"], str(held)]
            )
        reason = f"written by schema {v.manifest['schema_version']}; this app knows {SCHEMA_VERSION}: held"
        _log(store, path, v.sha, "held", reason, len(v.ops), 0)
        return ImportReport("held", ops_total=len(v.ops), reason=reason)
    for sha, content in v.blobs.items():
        if not store.blob_path(sha).exists():
            store.put_blob(content, "application/octet-stream")
    before = store.db.execute("SELECT count(*) FROM conflict").fetchone()[0]
    new = 0
    try:
        with transaction(store.db):
            newest = 0
            total = len(v.ops)
            batch = ProjectionBatch(store.db)
            for n, op in enumerate(v.ops):
                if n % PROGRESS_EVERY == 0:
                    tell(0.2 + 0.8 * n / max(total, 1), f"merging change {n:,} of {total:,}")
                if insert_op(store.db, op, batch):
                    apply_op(store.db, op, batch=batch)
                    newest = max(newest, op.hlc)
                    new += 1
            batch.flush()
            if new:
                store.observe_hlc(newest)  # the clock passes every stamp received (once, not per op)
            peer = v.manifest["origin"]
            for origin, seq in v.manifest["vector"].items():
                store.db.execute("INSERT OR REPLACE INTO peer_cursor VALUES (?, ?, ?)", [peer, origin, seq])
    except IntegrityError as exc:
        _log(store, path, v.sha, "refused", f"integrity: {exc}", len(v.ops), 0)
        return ImportReport("refused", ops_total=len(v.ops), reason=f"integrity: {exc}")
    conflicts = store.db.execute("SELECT count(*) FROM conflict").fetchone()[0] - before
    _log(store, path, v.sha, "applied", "", len(v.ops), new)
    tell(1.0, f"merged {new:,} new changes")
    return ImportReport(
        "applied",
        ops_total=len(v.ops),
        ops_new=new,
        blobs_new=len(v.blobs),
        conflicts_new=conflicts,
        origins=v.manifest["ranges"],
    )


def _log(store: Store, path: str | Path, sha: str, outcome: str, reason: str, ops: int, applied: int) -> None:
    with transaction(store.db):
        store.db.execute(
            "INSERT INTO bundle_log (at, file, bundle_sha256, outcome, reason, ops, applied) "
            "VALUES (?, ?, ?, ?, ?, ?, ?)",
            [_now(), str(path), sha, outcome, reason, ops, applied],
        )
