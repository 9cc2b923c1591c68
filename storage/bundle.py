"""Sync bundles: one zip file with a signed manifest, the ops as JSON lines with their signatures, and the blobs.

The manifest is signed with the exporting device's Ed25519 key (the key it enrolled at the office hub)
and every op carries its origin device's signature, so ops relayed from colleagues verify by their own
keys. Import verifies everything before the first write (size, exact entry names, the exporter's key as
the hub listed it, the manifest signature, hashes, op keys and signatures, contiguous ranges, no gap
against what this database holds), then applies in bounded batches. A bundle written by a newer schema
is held, not applied. Every attempt is logged.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
import re
import shutil
import time
import zipfile
import zlib
from collections.abc import Callable, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field
from json.encoder import encode_basestring
from pathlib import Path
from typing import Any

from cryptography.exceptions import InvalidSignature

from storage import identity
from storage.clock import far_ahead_ms
from storage.db import SCHEMA_VERSION, transaction
from storage.fastjson import LineReader
from storage.gcpause import gc_paused
from storage.hubsync import SetAside, office_rule, set_aside
from storage.identity import SignatureError
from storage.oplog import (
    MAX_ID_CHARS,
    OP_KEYS,
    SEQ_MAX,
    WALL_MS_MAX,
    Op,
    OpKind,
    ProjectionBatch,
    apply_op,
    canonical,
    content_hash,
    insert_op,
)
from storage.stamps import utc_stamp
from storage.store import Store
from storage.validate import RecordInvalid, check_op_record

FORMAT = "bracewalk-bundle"
FORMAT_VERSION = 2  # 2: Ed25519 signatures (manifest.sig, ops.sig) replace the firm-key MAC
MAX_BUNDLE_BYTES = 512 * 1024 * 1024
MAX_ENTRY_BYTES = 256 * 1024 * 1024
MAX_UNPACKED_BYTES = 1024 * 1024 * 1024  # all entries together, as declared and as read
MAX_MANIFEST_BYTES = 4 * 1024 * 1024  # read (bounded) before the MAC is checked
MAX_ENTRIES = 20_000  # blobs per bundle
MAX_OPS = 2_000_000
YEAR_MS = 365 * 86_400_000
MAX_AHEAD_MS = 100 * YEAR_MS  # stamps up to this far ahead are accepted (and flagged); the range lasts to 4199
MIN_FREE_BYTES = 64 * 1024 * 1024  # left free after an import's files, for the database to grow
BATCH_OPS = 25_000  # ops per import transaction: a save from another process waits at most one batch (~1 s here)
SHA256 = re.compile(r"^[0-9a-f]{64}$")
DEVICE_ID = re.compile(r"^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$")
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
    "sigs_sha256",
}
ENTRIES = ("manifest.json", "manifest.sig", "ops.jsonl", "ops.sig")
OP_SIG_PREFIX = b"bracewalk-op/1\n"  # what storage.identity.op_message puts before an op's canonical JSON
MANIFEST_SIG_PREFIX = b"bracewalk-bundle/2\n"


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
    """A bundle that failed verification; nothing was written.

    ``diverged``: (origin, seq) when the sender's own op differs from the one held here under the same
    number (the sender was restored from a backup and saved again): the import lowers what it records of
    the sender's holding of its own ops, so the next bundle for it carries the held op and the sender sees
    its restore (``_lower_cursor``).
    """

    def __init__(self, msg: str, diverged: tuple[str, int] | None = None):
        super().__init__(msg)
        self.diverged = diverged


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
    warning: str = ""  # accepted, but worth a look (stamps far ahead of this device's clock)


def _now() -> str:
    return utc_stamp()


PART_OPS = 50_000  # ops per bundle file of a split export (about 17 MB of ops.jsonl; import holds one part)
_BLOB_KEYS = ("sha256", "pdf_sha256", "evidence_sha256")


_dump = encode_basestring  # a str as JSON, exactly as json.dumps(..., ensure_ascii=False) writes it


def op_line(row: tuple[Any, ...]) -> str:
    """A bundle line straight from a stored op row (payload and base are stored as canonical JSON).

    Equal to ``canonical`` of the op as a dict (sorted keys, no spaces) without decoding and re-encoding
    the payload; tests/storage/test_sync_scale.py checks the equality.
    """
    origin, seq, hlc, entity, record_id, kind, payload, base, schema_version, wall_ms = row
    return (
        f'{{"base":{base},"entity":{_dump(entity)},"hlc":{hlc:d},"kind":{_dump(kind)},'
        f'"origin":{_dump(origin)},"payload":{payload},"record_id":{_dump(record_id)},'
        f'"schema_version":{schema_version:d},"seq":{seq:d},"wall_ms":{wall_ms:d}}}'
    )


@dataclass
class _Part:
    lines: list[str] = field(default_factory=list)
    sigs: list[str] = field(default_factory=list)
    signed_now: list[tuple[str, int, str]] = field(default_factory=list)  # own ops first signed by this export
    checked_now: list[tuple[str, int]] = field(default_factory=list)  # relayed signatures verified by this export
    ranges: dict[str, list[int]] = field(default_factory=dict)
    shas: set[str] = field(default_factory=set)


@dataclass
class _Exporter:
    """Who signs, and which origins' ops may be relayed (not revoked, each op with its origin's signature)."""

    store: Store
    key: Any
    revoked: set[str]

    def signature(
        self, origin: str, seq: int, line: str, stored: str | None, unchecked: bool, part: _Part
    ) -> str | None:
        """The op's signature: the stored one, or (for this device's own op) made now; None: not relayable.

        A stored signature that arrived unchecked (listed in ``op_sig_unchecked``) is verified now,
        before it is passed on.
        """
        if stored and unchecked:
            return stored if self._verifies(origin, seq, line, stored, part) else None
        if stored:
            return stored
        if origin not in (self.store.device_id, identity.DEMO_ORIGIN):
            return None
        key = self.key if origin == self.store.device_id else identity.demo_key()  # the demo, only when asked
        sig = identity.b64(key.sign(OP_SIG_PREFIX + line.encode()))
        part.signed_now.append((origin, seq, sig))
        return sig

    def _verifies(self, origin: str, seq: int, line: str, sig: str, part: _Part) -> bool:
        """Check a signature that arrived unchecked, by its origin's key; remember it once it verified."""
        try:
            key = identity.trusted_key(self.store.db, origin, allow_revoked=True)
            key.verify(identity.unb64(sig), OP_SIG_PREFIX + line.encode())
        except (SignatureError, InvalidSignature):
            return False
        part.checked_now.append((origin, seq))
        return True


def _parts(store: Store, cursor: dict[str, int], part_ops: int, include: Callable[[str], bool]) -> Any:
    """Stream the ops a peer has not seen (contiguous per origin) in parts of at most ``part_ops``.

    Each op goes with its origin's signature; a colleague's op held without one, or from a device
    the office revoked, ends that origin's run (the rest goes through the hub).
    """
    cols = ", ".join(f"o.{k}" for k in OP_KEYS)
    sql = (
        f"SELECT {cols}, s.sig, u.seq IS NOT NULL FROM op o "
        "LEFT JOIN op_sig s ON s.origin = o.origin AND s.seq = o.seq "
        "LEFT JOIN op_sig_unchecked u ON u.origin = o.origin AND u.seq = o.seq "
        "ORDER BY o.origin, o.seq"
    )
    revoked = {d.device_id for d in identity.trusted_devices(store.db) if d.revoked_ms}
    ex = _Exporter(store, identity.device_key(store.db), revoked)
    last: dict[str, int] = {}
    wanted: dict[str, bool] = {}  # include(origin), asked once per origin
    part = _Part()
    for full in store.db.conn.execute(sql):
        origin, seq, stored = full[0], full[1], full[10]
        if seq <= cursor.get(origin, 0) or last.get(origin) == -1:
            continue
        if (keep := wanted.get(origin)) is None:
            keep = wanted[origin] = include(origin)
        if not keep:
            continue
        prev = last.get(origin)
        line = op_line(full[:10])
        if stored and not full[11] and origin not in ex.revoked:
            sig: str | None = stored  # the common case of ``ex.signature``: a stored signature, not to check again
        else:
            sig = None if origin in ex.revoked else ex.signature(origin, seq, line, stored, bool(full[11]), part)
        if (prev is not None and seq != prev + 1) or sig is None:
            last[origin] = -1  # the run ended (a restored device's hole, an unsigned relay): a later export
            continue
        last[origin] = seq
        part.lines.append(line)
        part.sigs.append(sig)
        r = part.ranges.setdefault(origin, [seq, seq])
        r[1] = seq
        if "sha256" in full[6]:  # what ``_add_blobs`` looks for first
            _add_blobs(store, full[6], part.shas)
        if len(part.lines) >= part_ops:
            yield part
            part = _Part()
    if part.lines or not last:
        yield part


def _add_blobs(store: Store, payload_text: str, shas: set[str]) -> None:
    """Add the blobs an op's payload refers to (photos, notices, evidence) that this device holds."""
    if "sha256" not in payload_text:
        return
    payload = json.loads(payload_text)
    for key in _BLOB_KEYS:
        sha = payload.get(key)
        if sha and store.blob_path(sha).exists():
            shas.add(sha)


def part_path(out: Path, n: int) -> Path:
    """The file of part ``n`` (1-based) of a split export: ``out`` itself, then ``<stem>-2<suffix>``, ..."""
    return out if n == 1 else out.with_name(f"{out.stem}-{n}{out.suffix}")


def export_bundle(
    store: Store,
    out: str | Path,
    peer: str | None = None,
    progress: Progress | None = None,
    include_demo: bool = False,
) -> dict[str, Any]:
    """Write the ops ``peer`` has not seen (all ops when peer is None) and their blobs to ``out``.

    ``progress(fraction, what)`` is called as the work goes (for a progress bar). Returns the
    manifest; when the changes exceed ``PART_OPS`` they go in several files (``export_bundles``)
    and the manifest returned is the last one's, with ``op_count`` summed over the parts.
    Changes to the built-in demo site stay on the device unless ``include_demo``.
    """
    manifests = export_bundles(store, out, peer=peer, progress=progress, include_demo=include_demo)
    if len(manifests) == 1:
        return manifests[0]
    return dict(manifests[-1], op_count=sum(m["op_count"] for m in manifests), parts=len(manifests))


def export_bundles(
    store: Store,
    out: str | Path,
    peer: str | None = None,
    progress: Progress | None = None,
    part_ops: int = PART_OPS,
    include_demo: bool = False,
) -> list[dict[str, Any]]:
    """Write the changes as one or more bundles of at most ``part_ops`` ops each, to import in order.

    Ops stream from their stored canonical text (nothing is decoded and re-encoded), and at most two
    parts are held in memory (one being written while the next is read), so no file written can exceed
    what import accepts. The demo site's changes (``identity.DEMO_ORIGIN``) are left out unless
    ``include_demo``.
    """
    tell = progress or _silent
    tell(0.0, "reading changes")
    out = Path(out)
    if not out.parent.is_dir():
        raise FileNotFoundError(2, "the folder does not exist", str(out.parent))
    cursor = store.acknowledged(peer) if peer else {}  # what the peer acknowledged, never what was only written
    vector = dict(store.db.execute("SELECT origin, seq FROM seen").fetchall())
    if not include_demo:
        vector.pop(identity.DEMO_ORIGIN, None)
    total = int(store.db.execute("SELECT count(*) FROM op").fetchone()[0]) or 1
    parts = _parts(store, cursor, part_ops, _keep_all if include_demo else _not_demo)
    manifests, written = _write_parts(
        store,
        out,
        parts,
        (vector, _tips(store, vector)),
        lambda done, name: tell(min(0.95, done / total), f"writing {name}"),
    )
    done = sum(count for _, _, count in written)
    store.record_sent(peer)
    with transaction(store.db):
        for path, sha, count in written:
            store.db.execute(
                "INSERT INTO bundle_log (at, file, bundle_sha256, outcome, reason, ops, applied) "
                "VALUES (?, ?, ?, 'exported', '', ?, 0)",
                [_now(), str(path), sha, count],
            )
        if peer:  # written for the peer, not acknowledged: the cursor stays (sync.md 3.7), the next export resends
            for manifest in manifests:
                for origin, (_, last) in manifest["ranges"].items():
                    store.raise_mark("peer_written", peer, origin, last)
    tell(1.0, f"wrote {done:,} changes in {len(manifests)} file{'s' if len(manifests) > 1 else ''}")
    return manifests


_Job = tuple[Future[tuple[dict[str, Any], str]], Path, _Part]


def _write_parts(
    store: Store,
    out: Path,
    parts: Any,
    have: tuple[dict[str, int], dict[str, str]],
    tell: Callable[[int, str], None],
) -> tuple[list[dict[str, Any]], list[tuple[Path, str, int]]]:
    """Write each part to its file; the manifests and (file, SHA-256, op count) of each, in order.

    Each part is written (compressed, fsynced, hashed: all release the GIL) by a worker thread while
    the next part is read; a part is handed over only once the one before it is written, so at most
    two parts are held and a failed write stops the export before the next file is begun.
    ``tell(ops_done, file_name)`` reports progress. ``have``: the vector and its tips (``_tips``), read here
    (the worker thread reads no database).
    """
    key = identity.device_key(store.db)
    manifests: list[dict[str, Any]] = []
    written: list[tuple[Path, str, int]] = []
    pending: _Job | None = None

    def finish(job: _Job) -> None:
        future, path, part = job
        manifest, sha = future.result()  # a part that failed to write ends the export here
        _keep_signatures(store, part.signed_now, part.checked_now)
        manifests.append(manifest)
        written.append((path, sha, len(part.lines)))

    done = 0
    with ThreadPoolExecutor(max_workers=1, thread_name_prefix="export-part") as pool:
        for n, part in enumerate(parts, start=1):
            if pending is not None:
                finish(pending)
            path = part_path(out, n)
            tell(done, path.name)
            demo_only = set(part.ranges) == {identity.DEMO_ORIGIN}  # asked for: opens in any demo database
            signer = identity.demo_key() if demo_only else key
            pending = (pool.submit(_write_part, store, path, part, have, signer), path, part)
            done += len(part.lines)
        if pending is not None:
            finish(pending)
    return manifests, written


def _keep_all(_origin: str) -> bool:
    return True


def _not_demo(origin: str) -> bool:
    return origin != identity.DEMO_ORIGIN


def _keep_signatures(store: Store, signed: list[tuple[str, int, str]], checked: list[tuple[str, int]]) -> None:
    """Keep the signatures an export made for this device's ops (an op is signed once in its life)."""
    if signed or checked:
        with transaction(store.db):
            store.db.conn.executemany("INSERT OR IGNORE INTO op_sig VALUES (?, ?, ?)", signed)
            store.db.conn.executemany("DELETE FROM op_sig_unchecked WHERE origin=? AND seq=?", checked)


def _lines(items: list[str]) -> bytes:
    return ("\n".join(items) + ("\n" if items else "")).encode()


def _write_part(
    store: Store, out: Path, part: _Part, have: tuple[dict[str, int], dict[str, str]], key: Any
) -> tuple[dict[str, Any], str]:
    """Write one bundle file (fsynced, atomically); its manifest and the file's SHA-256."""
    vector, tips = have
    body = _lines(part.lines)
    sigs = _lines(part.sigs)
    blobs: list[dict[str, Any]] = [{"sha256": s, "size": store.blob_path(s).stat().st_size} for s in sorted(part.shas)]
    manifest = {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "schema_version": SCHEMA_VERSION,
        "origin": store.device_id,
        "created_ms": int(time.time() * 1000),
        "ranges": part.ranges,
        "op_count": len(part.lines),
        "ops_sha256": hashlib.sha256(body).hexdigest(),
        "blobs": blobs,
        "vector": vector,
        "tips": tips,
        "sigs_sha256": hashlib.sha256(sigs).hexdigest(),
    }
    mbytes = canonical(manifest).encode()
    signature = identity.b64(key.sign(MANIFEST_SIG_PREFIX + mbytes))
    tmp = out.with_name(out.name + ".part")
    try:
        # level 1: under half the default's time on op lines, files 30 % larger (50,000 ops: 1.4 MB, limits far off)
        with zipfile.ZipFile(tmp, "w", compression=zipfile.ZIP_DEFLATED, compresslevel=1) as z:
            z.writestr("manifest.json", mbytes)
            z.writestr("manifest.sig", signature)
            z.writestr("ops.jsonl", body)
            z.writestr("ops.sig", sigs)
            for b in blobs:
                z.write(store.blob_path(str(b["sha256"])), f"blobs/{b['sha256']}")
        with open(tmp, "rb") as fh:
            os.fsync(fh.fileno())
        os.replace(tmp, out)
    except OSError:
        tmp.unlink(missing_ok=True)  # a full disk leaves no partial bundle behind
        raise
    h = hashlib.sha256()
    with open(out, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return manifest, h.hexdigest()


def import_bundles(store: Store, paths: Sequence[str | Path], progress: Progress | None = None) -> list[ImportReport]:
    """Import the parts of a split export in order, stopping at the first one not applied."""
    reports = []
    for path in paths:
        report = import_bundle(store, path, progress)
        reports.append(report)
        if report.outcome != "applied":
            break
    return reports


def _contiguous(ops: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """Per origin, the unbroken run of ops from the first; a receiver refuses a bundle with a hole.

    A device restored from a backup may hold its own ops with a hole (those sent before the restore
    come back with the next import); the ops after the hole go in a later bundle.
    """
    out: list[dict[str, Any]] = []
    last: dict[str, int] = {}
    for o in ops:
        prev = last.get(o["origin"])
        if prev is None or o["seq"] == prev + 1:
            out.append(o)
            last[o["origin"]] = o["seq"]
        else:
            last[o["origin"]] = -1  # the run ended: nothing more of this origin in this bundle
    return out


@dataclass
class _Verified:
    manifest: dict[str, Any]
    ops: list[Op]
    blobs: dict[str, bytes]
    sha: str
    rebase_from: int | None = None  # own ops from this seq on are renumbered (restored device)
    sigs: list[str] = field(default_factory=list)  # each op's origin signature, kept for relaying
    stored: list[tuple[Any, ...]] = field(default_factory=list)  # each op's ``stored()``, encoded once
    finite: bool = False  # every op line was read by orjson: no NaN or infinity (``fastjson.LineReader``)
    aside: dict[int, str] = field(default_factory=dict)  # op index -> why the office rules refuse it


def _read_bounded(z: zipfile.ZipFile, info: zipfile.ZipInfo, limit: int) -> bytes:
    """An entry's bytes, refusing more than ``limit`` (the declared size is not trusted)."""
    if info.file_size > limit:
        msg = f"entry {info.filename} is {info.file_size} bytes; limit {limit}"
        raise BundleRefused(msg)
    try:
        with z.open(info) as fh:
            content = fh.read(limit + 1)
    except ZIP_ERRORS as exc:
        msg = f"unreadable entry {info.filename}: {exc}"
        raise BundleRefused(msg) from exc
    if len(content) > limit:
        msg = f"entry {info.filename} unpacks past {limit} bytes"
        raise BundleRefused(msg)
    return content


def _is_int(value: Any, low: int, high: int) -> bool:
    return isinstance(value, int) and not isinstance(value, bool) and low <= value <= high


def _refuse_unless(ok: bool, msg: str) -> None:
    if not ok:
        raise BundleRefused(msg)


def _check_header(manifest: dict[str, Any]) -> None:
    """Format, origin (a device id), schema, time, op count and hashes."""
    _refuse_unless(
        manifest["format"] == FORMAT and manifest["format_version"] == FORMAT_VERSION,
        f"unknown format {str(manifest['format'])[:40]!r} v{str(manifest['format_version'])[:10]}",
    )
    origin = manifest["origin"]
    # peer names such as "office" key the export cursors: a bundle may not claim one
    _refuse_unless(
        isinstance(origin, str) and bool(DEVICE_ID.match(origin)),
        f"manifest origin {str(origin)[:40]!r} is not a device id",
    )
    _refuse_unless(
        _is_int(manifest["schema_version"], 1, 10_000) and _is_int(manifest["created_ms"], 0, WALL_MS_MAX),
        "manifest schema_version or created_ms out of range",
    )
    _refuse_unless(
        _is_int(manifest["op_count"], 0, MAX_OPS)
        and all(isinstance(manifest[k], str) and SHA256.match(manifest[k]) for k in ("ops_sha256", "sigs_sha256")),
        f"manifest op_count must be 0 to {MAX_OPS}, and ops_sha256 and sigs_sha256 SHA-256 hashes",
    )


def _check_vectors(manifest: dict[str, Any]) -> None:
    """``ranges`` {origin: [first, last]} and ``vector`` {origin: seq}, within range."""
    for name in ("ranges", "vector"):
        _refuse_unless(isinstance(manifest[name], dict), f"manifest {name} must be an object")
    for origin_id, r in manifest["ranges"].items():
        ok = isinstance(r, list) and len(r) == 2 and all(_is_int(x, 1, SEQ_MAX) for x in r)
        _refuse_unless(ok, f"manifest range of {str(origin_id)[:12]} is not [first, last]")
    for origin_id, seq in manifest["vector"].items():
        ok = _is_int(seq, 0, SEQ_MAX) and len(origin_id) <= MAX_ID_CHARS
        _refuse_unless(ok, f"manifest vector entry {str(origin_id)[:12]} out of range")
    tips = manifest.get("tips", {})
    ok = isinstance(tips, dict) and set(tips) <= set(manifest["vector"])
    ok = ok and all(isinstance(t, str) and bool(SHA256.match(t)) for t in tips.values())
    _refuse_unless(ok, "manifest tips must give a SHA-256 for origins of the vector")


def _check_blob_list(manifest: dict[str, Any]) -> None:
    """``blobs``: at most MAX_ENTRIES {sha256, size} objects."""
    blobs = manifest["blobs"]
    _refuse_unless(
        isinstance(blobs, list) and len(blobs) <= MAX_ENTRIES, f"manifest blobs must be a list of at most {MAX_ENTRIES}"
    )
    for b in blobs:
        ok = isinstance(b, dict) and set(b) == {"sha256", "size"} and isinstance(b["sha256"], str)
        ok = ok and bool(SHA256.match(b["sha256"])) and _is_int(b["size"], 0, MAX_ENTRY_BYTES)
        _refuse_unless(ok, f"manifest blob entry {str(b)[:60]} is not {{sha256, size}}")


def _check_manifest_fields(manifest: dict[str, Any]) -> None:
    """Types and ranges of every manifest field (after its signature verified)."""
    _check_header(manifest)
    _check_vectors(manifest)
    _check_blob_list(manifest)


def _open_zip(data: bytes) -> tuple[zipfile.ZipFile, dict[str, zipfile.ZipInfo]]:
    """The zip and its entries by name, after the size, count and duplicate-name guards."""
    _refuse_unless(len(data) <= MAX_BUNDLE_BYTES, f"bundle is {len(data)} bytes; limit {MAX_BUNDLE_BYTES}")
    try:
        z = zipfile.ZipFile(io.BytesIO(data))
        infos = z.infolist()
    except ZIP_ERRORS as exc:
        msg = f"not a readable bundle: {exc}"
        raise BundleRefused(msg) from exc
    limit = MAX_ENTRIES + len(ENTRIES)
    _refuse_unless(len(infos) <= limit, f"bundle has {len(infos)} entries; limit {limit}")
    names = [i.filename for i in infos]
    _refuse_unless(len(names) == len(set(names)), "duplicate entries in bundle")
    total = sum(i.file_size for i in infos)
    _refuse_unless(total <= MAX_UNPACKED_BYTES, f"bundle unpacks to {total} bytes; limit {MAX_UNPACKED_BYTES}")
    by_name = {i.filename: i for i in infos}
    for required in ENTRIES:
        _refuse_unless(required in by_name, f"missing entry {required}")
    return z, by_name


def _signed_manifest(store: Store, z: zipfile.ZipFile, by_name: dict[str, zipfile.ZipInfo]) -> dict[str, Any]:
    """The manifest, once its signature verified by the exporting device's enrolled key.

    Only the bounded manifest is read before this: the exporter must be a device the office hub
    listed to this tablet and not revoked, and its signature must cover the exact manifest bytes.
    """
    mbytes = _read_bounded(z, by_name["manifest.json"], MAX_MANIFEST_BYTES)
    sig = _read_bounded(z, by_name["manifest.sig"], 128)
    try:
        manifest = json.loads(mbytes)
    except (ValueError, RecursionError) as exc:
        msg = f"manifest is not JSON: {str(exc)[:80]}"
        raise BundleRefused(msg) from exc
    keys_ok = isinstance(manifest, dict) and set(manifest) in (MANIFEST_KEYS, MANIFEST_KEYS | {"tips"})
    _refuse_unless(keys_ok, "manifest keys differ from the format")
    origin = manifest["origin"]
    origin_ok = isinstance(origin, str) and bool(DEVICE_ID.match(origin))
    _refuse_unless(origin_ok, f"manifest origin {str(origin)[:40]!r} is not a device id")
    try:
        key = identity.trusted_key(store.db, origin)
        key.verify(identity.unb64(sig.decode("ascii").strip()), MANIFEST_SIG_PREFIX + mbytes)
    except SignatureError as exc:
        msg = f"exporting device: {exc}"
        raise BundleRefused(msg) from exc
    except (InvalidSignature, UnicodeDecodeError, ValueError) as exc:
        msg = f"the manifest signature of device {origin[:8]} does not verify (tampered, or signed by another key)"
        raise BundleRefused(msg) from exc
    _check_manifest_fields(manifest)
    return manifest


def _entries(
    z: zipfile.ZipFile, by_name: dict[str, zipfile.ZipInfo], manifest: dict[str, Any]
) -> tuple[bytes, bytes, dict[str, bytes]]:
    """ops.jsonl, ops.sig and the blobs, each read with a bound and checked against its hash."""
    blob_names = {f"blobs/{b['sha256']}" for b in manifest["blobs"]}
    _refuse_unless(set(by_name) == set(ENTRIES) | blob_names, "bundle entries differ from the manifest")
    body = _read_bounded(z, by_name["ops.jsonl"], MAX_ENTRY_BYTES)
    sigs = _read_bounded(z, by_name["ops.sig"], MAX_ENTRY_BYTES)
    blobs = {
        b["sha256"]: _read_bounded(z, by_name[f"blobs/{b['sha256']}"], min(b["size"], MAX_ENTRY_BYTES))
        for b in manifest["blobs"]
    }
    _refuse_unless(hashlib.sha256(body).hexdigest() == manifest["ops_sha256"], "ops hash does not match the manifest")
    _refuse_unless(
        hashlib.sha256(sigs).hexdigest() == manifest["sigs_sha256"], "op signatures hash does not match the manifest"
    )
    for sha, content in blobs.items():
        _refuse_unless(hashlib.sha256(content).hexdigest() == sha, f"blob {sha[:12]} does not match its hash")
    return body, sigs, blobs


def _op_lines(text: str) -> list[str]:
    """The lines of ops.jsonl, split at the line feed only, as they were joined.

    Not ``str.splitlines``: that also splits at U+0085, U+2028 and U+2029, which canonical JSON
    (``ensure_ascii=False``) writes raw inside strings, so a note pasted with a line separator made
    every bundle carrying it unreadable.
    """
    lines = text.split("\n")
    if lines[-1] == "":
        lines.pop()  # the newline after the last op (an empty file has no line)
    return lines


def _parse_ops(body: bytes, sigs: bytes, op_count: int) -> tuple[list[Op], list[str], bool]:
    """The op lines as ops, one signature per op, and whether every value read is finite (``LineReader.finite``)."""
    ops = []
    read = LineReader(body)
    try:
        for n, line in enumerate(_op_lines(body.decode()), start=1):
            _refuse_unless(n <= MAX_OPS, f"more than {MAX_OPS} ops")
            ops.append(Op.from_row(read(line)))
    except (ValueError, KeyError, TypeError, AttributeError, RecursionError) as exc:
        msg = f"bad op line {len(ops) + 1}: {str(exc)[:120]}"
        raise BundleRefused(msg) from exc
    try:
        sig_lines = sigs.decode("ascii").splitlines()
    except UnicodeDecodeError as exc:
        msg = "op signatures are not text"
        raise BundleRefused(msg) from exc
    _refuse_unless(len(ops) == op_count, "op count differs from the manifest")
    _refuse_unless(len(sig_lines) == len(ops), "one signature per op expected")
    return ops, sig_lines, read.finite


def _check_op_content(store: Store, ops: list[Op], stored: list[tuple[Any, ...]]) -> None:
    """Stamps within range of this clock, and every record as a local save would write it."""
    horizon = store.wall_ms() + MAX_AHEAD_MS
    for op, row in zip(ops, stored, strict=True):
        if op.hlc >> 16 > horizon:  # accepted far ahead is flagged; this far would exhaust the clock's range
            msg = (
                f"op {op.origin[:8]}:{op.seq} hlc stamped more than {MAX_AHEAD_MS // YEAR_MS} years ahead of this clock"
            )
            raise BundleRefused(msg)
        try:
            check_op_record(op, row[4])  # the payload's canonical text, encoded once per op
        except RecordInvalid as exc:
            msg = f"invalid record: {exc}"
            raise BundleRefused(msg) from exc


VERIFY_THREADS = min(4, os.cpu_count() or 1)  # Ed25519 verification releases the GIL: threads share it out
VERIFY_MIN_OPS = 256  # fewer relayed ops than this are verified in the calling thread


def _check_op_signatures(
    store: Store, ops: list[Op], sigs: list[str], exporter: str, stored: list[tuple[Any, ...]]
) -> None:
    """Every relayed op verifies by its own origin device's key, not the exporter's.

    The exporter's own ops are covered by its manifest signature (over the ops' hash); their per-op
    signatures are kept unchecked and verified when relayed onward (``op_sig_unchecked``).
    The keys are looked up in log order here; the signatures are checked by a small thread pool
    (``cryptography`` releases the GIL while it verifies). The refusal names the first op in log order
    that fails, a key lookup or a signature, as checking one op after another would.
    """
    keys: dict[str, Any] = {}
    todo: list[int] = []
    lookup_failed: tuple[int, SignatureError] | None = None
    for n, op in enumerate(ops):
        if op.origin == exporter:
            continue
        if op.origin not in keys:
            try:
                keys[op.origin] = identity.trusted_key(store.db, op.origin)
            except SignatureError as exc:
                lookup_failed = (n, exc)
                break
        todo.append(n)
    bad = _first_bad_signature(ops, sigs, stored, keys, todo)
    if bad is not None:
        n, why = bad
        msg = f"op {ops[n].origin[:8]}:{ops[n].seq}: {why}"
        raise BundleRefused(msg)
    if lookup_failed is not None:
        at, unknown = lookup_failed
        msg = f"op {ops[at].origin[:8]}:{ops[at].seq}: {unknown}"
        raise BundleRefused(msg) from unknown


def _first_bad_signature(
    ops: list[Op], sigs: list[str], stored: list[tuple[Any, ...]], keys: dict[str, Any], todo: list[int]
) -> tuple[int, str] | None:
    """The first of ops ``todo`` (indices, in log order) whose signature does not verify, and why; None if all do."""
    if len(todo) < VERIFY_MIN_OPS or VERIFY_THREADS < 2:
        return _first_bad_in(ops, sigs, stored, keys, todo)
    size = -(-len(todo) // VERIFY_THREADS)
    chunks = [todo[i : i + size] for i in range(0, len(todo), size)]
    with ThreadPoolExecutor(max_workers=len(chunks), thread_name_prefix="verify-op") as pool:
        found = list(pool.map(lambda chunk: _first_bad_in(ops, sigs, stored, keys, chunk), chunks))
    return next((f for f in found if f is not None), None)  # chunks in log order: the earliest failure


def _first_bad_in(
    ops: list[Op], sigs: list[str], stored: list[tuple[Any, ...]], keys: dict[str, Any], todo: list[int]
) -> tuple[int, str] | None:
    """``_first_bad_signature`` in this thread: what ``identity.verify_op`` checks, over the op's stored texts.

    The signed message is the op's canonical line (``op_line`` of its stored texts, equal to
    ``identity.op_message``: tests/storage/test_sync_scale.py), so nothing is encoded again.
    """
    for n in todo:
        op = ops[n]
        line = op_line((op.origin, op.seq, *stored[n], op.schema_version, op.wall_ms))
        try:
            keys[op.origin].verify(identity.unb64(sigs[n]), OP_SIG_PREFIX + line.encode())
        except SignatureError as exc:
            return n, str(exc)
        except InvalidSignature:
            return n, f"op {op.origin[:8]}:{op.seq} signature does not verify"
    return None


def verify_bundle(store: Store, data: bytes) -> _Verified:
    """Check a bundle completely without writing; raise BundleRefused with the reason.

    Order: sizes and entry count from the zip directory, then the exporter's signature over a bounded
    manifest, and only then the large entries (each read with a bound), hashes, op keys, every op's
    signature by its origin, ranges, and every record against the models.
    """
    z, by_name = _open_zip(data)
    manifest = _signed_manifest(store, z, by_name)
    body, sig_body, blobs = _entries(z, by_name, manifest)
    ops, sigs, finite = _parse_ops(body, sig_body, manifest["op_count"])
    stored = [op.stored_parsed(finite) for op in ops]  # each op's canonical texts, once for the checks and the merge
    _check_op_signatures(store, ops, sigs, manifest["origin"], stored)
    _check_op_content(store, ops, stored)
    rebase_from = _check_integrity(store, ops, stored, manifest["origin"])
    _check_ranges(store, manifest, ops, rebase_from)
    aside = _refused_by_rules(store, ops)
    return _Verified(manifest, ops, blobs, hashlib.sha256(data).hexdigest(), rebase_from, sigs, stored, finite, aside)


def _refused_by_rules(store: Store, ops: list[Op]) -> dict[int, str]:
    """The ops the office hub's rules refuse, by index, with why: set aside, not applied (the rest are).

    A status move to 'verified' from a device the hub lists as not a reviewer (``validate.reviewer_only``):
    the hub refuses it, so applying it here would make a sign-off no reviewer gave and leave this tablet
    disagreeing with the office. Like a pulled op that fails its checks, it is kept in ``pull_quarantine``
    and shown in words on the Sync screen. This device's own ops coming back are not judged again.
    """
    out: dict[int, str] = {}
    roles: dict[str, str | None] = {}
    for n, op in enumerate(ops):
        why = office_rule(store, op, roles) if op.kind == OpKind.STATUS else None
        if why:
            out[n] = why
    return out


def _held_ops(store: Store, ops: list[Op]) -> dict[tuple[str, int], tuple[Any, ...]]:
    """The ops of the bundle's seq ranges this database already holds, one query per origin."""
    by_origin: dict[str, list[int]] = {}
    for op in ops:
        by_origin.setdefault(op.origin, []).append(op.seq)
    held: dict[tuple[str, int], tuple[Any, ...]] = {}
    for origin, seqs in by_origin.items():
        first, last = min(seqs), max(seqs)
        _refuse_unless(last - first + 1 == len(seqs), f"ops of {origin[:8]} are not contiguous")
        rows = store.db.execute(
            "SELECT seq, hlc, entity, record_id, kind, payload, base FROM op WHERE origin=? AND seq BETWEEN ? AND ?",
            [origin, first, last],
        )
        held.update(((origin, r[0]), tuple(r[1:])) for r in rows)
    return held


def _check_integrity(store: Store, ops: list[Op], stored: list[tuple[Any, ...]], sender: str) -> int | None:
    """Refuse, before any write, an op or insert-only record that contradicts what is held.

    Checked here (read-only) so that applying in batches can never stop half-way on a conflict.
    Returns the first seq at which this device's own ops, coming back from a peer, differ from the
    ones it holds: it was restored from a backup and then saved; the import renumbers those saves.
    """
    mine: dict[tuple[str, str], str] = {}
    rebase_from: int | None = None
    held_ops = _held_ops(store, ops)
    for op, mine_row in zip(ops, stored, strict=True):
        row = held_ops.get((op.origin, op.seq))
        if row is not None:
            if row != mine_row:
                if op.origin != store.device_id:
                    _refuse_different(op, sender)
                rebase_from = op.seq if rebase_from is None else min(rebase_from, op.seq)
            continue
        if op.kind != OpKind.INSERT:
            continue
        chash = content_hash(op.payload)
        key = (op.entity, op.record_id)
        held = store.db.execute(f"SELECT content_hash FROM {op.entity} WHERE id=?", [op.record_id]).fetchone()
        known = mine.setdefault(key, held[0] if held else chash)
        if known != chash:
            msg = f"integrity: {op.entity} {op.record_id}: same id, different content"
            raise BundleRefused(msg)
    return rebase_from


def _refuse_different(op: Op, sender: str) -> None:
    own = op.origin == sender
    hint = (
        " (the sending device was restored from a backup: import a bundle from here on it, then send again)"
        if own
        else ""
    )
    msg = f"integrity: op {op.origin}:{op.seq} already held with different content{hint}"
    raise BundleRefused(msg, diverged=(op.origin, op.seq) if own else None)


def op_digest(origin: str, seq: int, stored: tuple[Any, ...]) -> str:
    """SHA-256 of one op as stored (its ``stored()`` tuple with origin and seq): equal ops, equal digests."""
    return hashlib.sha256(canonical([origin, seq, *stored]).encode()).hexdigest()


def _held_digest(store: Store, origin: str, seq: int) -> str | None:
    row = store.db.execute(
        "SELECT hlc, entity, record_id, kind, payload, base FROM op WHERE origin=? AND seq=?", [origin, seq]
    ).fetchone()
    return None if row is None else op_digest(origin, seq, tuple(row))


def _tips(store: Store, vector: dict[str, int]) -> dict[str, str]:
    """Per origin of the vector, the digest of the op held at its seq (``op_digest``).

    A receiver holding a different op under that number sees that the two devices hold different
    histories: one of them was restored from a backup and reused the number.
    """
    out = {}
    for origin, seq in vector.items():
        digest = _held_digest(store, origin, seq) if seq > 0 else None
        if digest is not None:
            out[origin] = digest
    return out


def _lower_cursor(store: Store, peer: str, origin: str, seq: int) -> None:
    """Record that ``peer`` holds ``origin``'s ops only up to ``seq`` (never raising it)."""
    store.db.execute(
        "INSERT INTO peer_cursor VALUES (?, ?, ?) "
        "ON CONFLICT (peer, origin) DO UPDATE SET seq = min(seq, excluded.seq)",
        [peer, origin, max(0, seq)],
    )


def _check_ranges(store: Store, manifest: dict[str, Any], ops: list[Op], rebase_from: int | None) -> None:
    by_origin: dict[str, list[int]] = {}
    for op in ops:
        by_origin.setdefault(op.origin, []).append(op.seq)
    if {k: [v[0], v[-1]] for k, v in by_origin.items()} != manifest["ranges"]:
        msg = "op ranges differ from the manifest"
        raise BundleRefused(msg)
    seen = dict(store.db.execute("SELECT origin, seq FROM seen").fetchall())
    if rebase_from is not None:
        seen[store.device_id] = min(seen.get(store.device_id, 0), rebase_from - 1)
    for origin, seqs in by_origin.items():
        if seqs != list(range(seqs[0], seqs[-1] + 1)):
            msg = f"ops of {origin[:8]} are not contiguous"
            raise BundleRefused(msg)
        if seqs[0] > seen.get(origin, 0) + 1:
            msg = (
                f"gap: this database holds {origin[:8]} up to {seen.get(origin, 0)}, bundle starts "
                f"at {seqs[0]}; import the earlier bundle first"
            )
            raise BundleRefused(msg)


def import_bundle(store: Store, path: str | Path, progress: Progress | None = None) -> ImportReport:
    """Verify then apply a bundle in bounded batches; log the attempt whatever its outcome.

    Nothing is written until the whole bundle verified (a refused bundle leaves no row or blob).
    The ops are applied in transactions of at most ``BATCH_OPS`` ops, in log order, so a save from
    another process waits at most one batch; each batch is a whole unit (a killed import leaves a
    prefix of the log, and importing the same bundle again resumes it).
    ``progress(fraction, what)`` is called as the work goes (for a progress bar).
    Automatic cyclic collection is paused for the import (``storage.gcpause``): its ops and rows live
    to the end, so collecting during it finds nothing.
    """
    with gc_paused():
        return _import_bundle(store, path, progress)


def _import_bundle(store: Store, path: Path | str, progress: Progress | None) -> ImportReport:
    """``import_bundle``'s work (run with the collector paused)."""
    tell = progress or _silent
    tell(0.0, "verifying")
    path = Path(path)
    early = (
        f"{path} is a folder, not a bundle file"
        if path.is_dir()
        else f"bundle is {path.stat().st_size} bytes; limit {MAX_BUNDLE_BYTES}"
        if path.stat().st_size > MAX_BUNDLE_BYTES
        else ""
    )
    if early:
        _log(store, path, "", "refused", early, 0, 0)
        return ImportReport("refused", reason=early)
    data = path.read_bytes()
    try:
        v = verify_bundle(store, data)
    except BundleRefused as exc:
        _log(store, path, hashlib.sha256(data).hexdigest(), "refused", str(exc), 0, 0, exc.diverged)
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
    warning = "; ".join(w for w in (_clock_warning(store, v.ops), _aside_warning(v)) if w)
    needed = sum(len(c) for sha, c in v.blobs.items() if not store.blob_path(sha).exists())
    store.blob_dir.mkdir(parents=True, exist_ok=True)
    free = shutil.disk_usage(store.blob_dir).free
    if needed + MIN_FREE_BYTES > free:
        reason = f"not enough free space: the bundle's files need {needed:,} bytes, {free:,} free; nothing written"
        _log(store, path, v.sha, "refused", reason, len(v.ops), 0)
        return ImportReport("refused", ops_total=len(v.ops), reason=reason)
    created: list[Path] = []
    committed: list[int] = []
    try:
        for sha, content in v.blobs.items():
            if not store.blob_path(sha).exists():
                store.write_blob_file(content)
                created.append(store.blob_path(sha))
        before = store.db.execute("SELECT count(*) FROM conflict").fetchone()[0]
        new = _apply_batches(store, v, tell, committed)
    except BaseException:
        if not committed:  # nothing committed (a full disk, a kill signal): the blobs this import wrote go too
            for path_created in created:
                path_created.unlink(missing_ok=True)
        raise
    conflicts = store.db.execute("SELECT count(*) FROM conflict").fetchone()[0] - before
    _log(store, path, v.sha, "applied", warning, len(v.ops), new)
    tell(1.0, f"merged {new:,} new changes")
    return ImportReport(
        "applied",
        ops_total=len(v.ops),
        ops_new=new,
        blobs_new=len(created),  # files this import wrote, not those already held
        conflicts_new=conflicts,
        origins=v.manifest["ranges"],
        warning=warning,
    )


def _apply_batches(store: Store, v: _Verified, tell: Progress, committed: list[int]) -> int:
    """Merge the verified ops in transactions of at most BATCH_OPS ops; the number of new ops.

    ``committed`` receives the start of each batch once it has committed.
    """
    new = 0
    total = len(v.ops)
    own = [op.seq for op in v.ops if op.origin == store.device_id]
    batch: ProjectionBatch | None = None
    for start in range(0, max(total, 1), BATCH_OPS):
        with transaction(store.db):
            if start == 0:
                _first_batch(store, v)
            if batch is None:
                batch = ProjectionBatch(store.db, finite=v.finite)
            else:
                batch.renew()  # rows and stamps read by earlier batches stay, unless another connection wrote
            new += _merge_batch(store, v, start, tell, batch)
            if own:
                store.resume_seq(max(own))  # this device's own ops came back: it was restored from a backup
            if start + BATCH_OPS >= total:
                _sender_cursor(store, v.manifest)
        committed.append(start)
    return new


def _first_batch(store: Store, v: _Verified) -> None:
    """Renumber a restored device's unsent saves and index the blobs (inside the first batch)."""
    if v.rebase_from is not None:
        top = max(op.seq for op in v.ops if op.origin == store.device_id)
        store.renumber_own_ops(v.rebase_from, top, max(op.hlc for op in v.ops))
    for sha, content in v.blobs.items():
        store.index_blob(sha, len(content), "application/octet-stream")


def _merge_batch(store: Store, v: _Verified, start: int, tell: Progress, batch: ProjectionBatch) -> int:
    """Merge ops [start, start + BATCH_OPS) through ``batch`` and keep their signatures; the number of new ops."""
    total = len(v.ops)
    newest = 0
    new = 0
    chunk = v.ops[start : start + BATCH_OPS]
    batch.prefetch(chunk)
    aside = []
    for n, op in enumerate(chunk, start=start):
        if n % PROGRESS_EVERY == 0:
            tell(0.2 + 0.8 * n / max(total, 1), f"merging change {n:,} of {total:,}")
        if n in v.aside:
            aside.append((op, v.sigs[n] if v.sigs else "", v.aside[n], SetAside.OFFICE_RULE))
            continue
        if insert_op(store.db, op, batch, v.stored[n]):
            apply_op(store.db, op, batch=batch)
            newest = max(newest, op.hlc)
            new += 1
    batch.flush()
    if aside:
        set_aside(store, aside, store.wall_ms())
    if v.sigs:
        ops, sigs = chunk, v.sigs[start : start + BATCH_OPS]
        if aside:  # a set-aside op's signature is kept with it in the quarantine, not as a held op's
            kept = [(op, sig) for k, (op, sig) in enumerate(zip(ops, sigs, strict=True)) if start + k not in v.aside]
            ops, sigs = [op for op, _ in kept], [sig for _, sig in kept]
        _keep_received_signatures(store, ops, sigs, v.manifest["origin"])
    if newest:
        store.observe_hlc(newest)  # the clock passes every stamp received (once a batch, not per op)
    return new


def _keep_received_signatures(store: Store, ops: list[Op], sigs: list[str], exporter: str) -> None:
    """Keep each op's origin signature for relaying; the exporter's own ones marked unchecked if new here."""
    conn = store.db.conn
    own = [op.seq for op in ops if op.origin == exporter]  # contiguous (checked before the first write)
    if own:
        # one range read instead of a NOT EXISTS probe per op: the exporter's ops already signed here stay so
        signed = {
            r[0]
            for r in conn.execute(
                "SELECT seq FROM op_sig WHERE origin=? AND seq BETWEEN ? AND ?", [exporter, own[0], own[-1]]
            )
        }
        conn.executemany(
            "INSERT OR IGNORE INTO op_sig_unchecked VALUES (?, ?)", [(exporter, s) for s in own if s not in signed]
        )
    rows = [(op.origin, op.seq, sig) for op, sig in zip(ops, sigs, strict=True)]
    conn.executemany("INSERT OR IGNORE INTO op_sig VALUES (?, ?, ?)", rows)


def _sender_cursor(store: Store, manifest: dict[str, Any]) -> None:
    """What the sender holds (its vector) need not be sent back to it (inside the last batch).

    Trusted only where the two histories agree: when the sender's op at its vector's seq (``tips``) is not
    the op held here under that number, one of the two devices was restored from a backup and reused the
    number; the sender is then taken to hold none of that origin's ops, so the next bundle for it carries
    them and the difference is found (the restored device renumbers its saves, or the import says why not).
    """
    peer = manifest["origin"]
    tips = manifest.get("tips", {})
    for origin, seq in manifest["vector"].items():
        top = store.held_seq(origin)  # a peer has not seen more of an origin than exists here
        held = min(seq, top)
        if origin in tips and held == seq and _held_digest(store, origin, seq) != tips[origin]:
            held = 0
        store.db.execute("INSERT OR REPLACE INTO peer_cursor VALUES (?, ?, ?)", [peer, origin, held])


def _aside_warning(v: _Verified) -> str:
    """The ops set aside by the hub's rules, in words ('' if none)."""
    if not v.aside:
        return ""
    why = sorted({reason.split(": ", 1)[-1] for reason in v.aside.values()})
    return f"{len(v.aside)} changes set aside, not applied ({'; '.join(why)}): listed on the Sync screen"


def _clock_warning(store: Store, ops: list[Op]) -> str:
    """A flag for stamps far ahead of this device's wall clock (accepted: the device's clock follows)."""
    wall = store.wall_ms()
    ahead = [op for op in ops if far_ahead_ms(op.hlc, wall) > 0]
    if not ahead:
        return ""
    worst = max(ahead, key=lambda op: op.hlc)
    days = ((worst.hlc >> 16) - wall) / 86_400_000
    return (
        f"clock: {len(ahead)} changes stamped up to {days:,.1f} days ahead of this tablet's clock "
        f"(from {worst.origin[:8]}); accepted, and this tablet's next edits still take effect"
    )


def _log(
    store: Store,
    path: str | Path,
    sha: str,
    outcome: str,
    reason: str,
    ops: int,
    applied: int,
    diverged: tuple[str, int] | None = None,
) -> None:
    """Log an import attempt; a sender found restored (``diverged``) is taken to hold its own ops below it."""
    with transaction(store.db):
        if diverged is not None:
            _lower_cursor(store, diverged[0], diverged[0], diverged[1] - 1)
        store.db.execute(
            "INSERT INTO bundle_log (at, file, bundle_sha256, outcome, reason, ops, applied) "
            "VALUES (?, ?, ?, ?, ?, ?, ?)",
            [_now(), str(path), sha, outcome, reason, ops, applied],
        )
