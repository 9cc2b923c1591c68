"""The faster import and export paths give what the plain ones give.

- Relayed ops' signatures are checked by a thread pool: the result (applied, or the refusal naming the
  first failing op in log order) equals checking one op after another (``VERIFY_THREADS = 1``). The
  verifier is Ed25519 (RFC 8032) as implemented by ``cryptography``; a signature made by another key
  must fail.
- ``export_bundles`` writes a part while it reads the next: the files are the ones a part-at-a-time
  export writes, and a part that fails to write stops the export before the next file is begun.
"""

from __future__ import annotations

import hashlib
import io
import json
import zipfile
from pathlib import Path

import pytest

import storage.bundle as bundle_mod
from storage import Store, identity
from storage.bundle import MANIFEST_SIG_PREFIX, export_bundle, export_bundles, import_bundle, part_path
from storage.oplog import canonical
from tests.core.beams import glulam
from tests.storage.signing import introduce

NOT_COMPARED = ("bundle_log", "sqlite_sequence", "meta", "device_key")  # the import log; each device's own id and key


def _state(store: Store) -> dict[str, list[tuple[object, ...]]]:
    tables = [r[0] for r in store.db.execute("SELECT name FROM sqlite_master WHERE type='table' ORDER BY name")]
    return {t: store.db.execute(f"SELECT * FROM {t} ORDER BY 1, 2").fetchall() for t in tables if t not in NOT_COMPARED}


@pytest.fixture(autouse=True)
def strict(monkeypatch):
    """Only the keys a hub listed (and the device's own) are trusted."""
    monkeypatch.setattr(identity, "trusted_key", identity.trusted_key.__wrapped__)


def _origin_with_edits(path: Path, beams: int, edits: int) -> Store:
    a = Store(path)
    site = a.create_site(name="Relay")
    ids = [a.save_beam(site.id, glulam(mark=f"R-{i}")) for i in range(beams)]
    for n in range(edits):
        a.update_beam(ids[n % beams], {"notes": f"edit {n}"})
    return a


@pytest.fixture
def relayed(tmp_path):
    """Device a's ops (more than VERIFY_MIN_OPS) relayed by b: the bundle b exports, and a, b."""
    a = _origin_with_edits(tmp_path / "a.db", 20, bundle_mod.VERIFY_MIN_OPS + 40)
    b = Store(tmp_path / "b.db")
    introduce(b, a)
    export_bundle(a, tmp_path / "a.zip")
    assert import_bundle(b, tmp_path / "a.zip").outcome == "applied"
    export_bundle(b, tmp_path / "b.zip")
    return a, b, tmp_path


def _import_both_ways(a: Store, b: Store, tmp: Path, name: str, monkeypatch) -> tuple[tuple[str, str], ...]:
    """Import ``name`` into a fresh tablet with the pool and into another one-op-at-a-time: (outcome, reason) each."""
    results = []
    for threads in (bundle_mod.VERIFY_THREADS, 1):
        monkeypatch.setattr(bundle_mod, "VERIFY_THREADS", threads)
        c = Store(tmp / f"c{threads}-{name}.db")
        introduce(c, a, b)
        report = import_bundle(c, tmp / name)
        results.append((report.outcome, report.reason, _state(c)))
    (out1, why1, state1), (out2, why2, state2) = results
    assert (out1, why1) == (out2, why2)
    assert state1 == state2
    return (out1, why1), (out2, why2)


def test_relayed_signatures_checked_in_threads_apply_as_one_at_a_time(relayed, monkeypatch):
    a, b, tmp = relayed
    monkeypatch.setattr(bundle_mod, "VERIFY_THREADS", 2)  # a pool even on a one-core machine
    (outcome, reason), _ = _import_both_ways(a, b, tmp, "b.zip", monkeypatch)
    assert outcome == "applied", reason


def _with_op_signatures_replaced(b: Store, src: Path, out: Path, bad: dict[int, str]) -> None:
    """``src`` with the op signatures at ``bad`` replaced, the manifest hash updated and signed again by b."""
    with zipfile.ZipFile(src) as z:
        entries = {n: z.read(n) for n in z.namelist()}
    sigs = entries["ops.sig"].decode().splitlines()
    for n, sig in bad.items():
        sigs[n] = sig
    entries["ops.sig"] = "".join(s + "\n" for s in sigs).encode()
    manifest = json.loads(entries["manifest.json"])
    manifest["sigs_sha256"] = hashlib.sha256(entries["ops.sig"]).hexdigest()
    entries["manifest.json"] = canonical(manifest).encode()
    key = identity.device_key(b.db)
    entries["manifest.sig"] = identity.b64(key.sign(MANIFEST_SIG_PREFIX + entries["manifest.json"])).encode()
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        for n, content in entries.items():
            z.writestr(n, content)
    out.write_bytes(buf.getvalue())


def test_the_first_bad_relayed_signature_in_log_order_is_named(relayed, monkeypatch):
    """Two forged signatures, one in each thread's share (and one not base64): the earlier op is named."""
    a, b, tmp = relayed
    monkeypatch.setattr(bundle_mod, "VERIFY_THREADS", 2)
    with zipfile.ZipFile(tmp / "b.zip") as z:
        lines = z.read("ops.jsonl").decode().splitlines()
    other = identity.new_private_key()  # a valid signature by a key the receiver does not hold for a
    first, later = len(lines) // 4, 3 * len(lines) // 4
    forged = identity.b64(other.sign(bundle_mod.OP_SIG_PREFIX + lines[first].encode()))
    _with_op_signatures_replaced(b, tmp / "b.zip", tmp / "f.zip", {first: forged, later: "!!not base64!!"})
    (outcome, reason), _ = _import_both_ways(a, b, tmp, "f.zip", monkeypatch)
    seq = json.loads(lines[first])["seq"]
    assert outcome == "refused"
    assert reason == f"op {a.device_id[:8]}:{seq}: op {a.device_id[:8]}:{seq} signature does not verify"
    _with_op_signatures_replaced(b, tmp / "b.zip", tmp / "g.zip", {later: "!!not base64!!"})
    (outcome, reason), _ = _import_both_ways(a, b, tmp, "g.zip", monkeypatch)
    assert outcome == "refused"
    assert "not base64" in reason


def test_export_writes_the_same_parts_and_stops_at_a_failed_write(tmp_path, monkeypatch):
    a = _origin_with_edits(tmp_path / "a.db", 4, 40)
    export_bundle(a, tmp_path / "sign.zip")  # signs every op once, as a first send does
    parts = export_bundles(a, tmp_path / "p.zip", part_ops=10)
    assert len(parts) >= 3
    for n, manifest in enumerate(parts, start=1):
        with zipfile.ZipFile(part_path(tmp_path / "p.zip", n)) as z:
            body = z.read("ops.jsonl")
        assert hashlib.sha256(body).hexdigest() == manifest["ops_sha256"]
        assert manifest["op_count"] == len(body.splitlines())
    assert sum(m["op_count"] for m in parts) == a.db.execute("SELECT count(*) FROM op").fetchone()[0]
    real = bundle_mod._write_part

    def fail_second(store, out, part, vector, key):
        if out.name == "q-2.zip":
            raise OSError(28, "No space left on device")
        return real(store, out, part, vector, key)

    monkeypatch.setattr(bundle_mod, "_write_part", fail_second)
    with pytest.raises(OSError, match="No space"):
        export_bundles(a, tmp_path / "q.zip", part_ops=10)
    assert (tmp_path / "q.zip").exists()
    assert not any((tmp_path / f"q-{n}.zip").exists() for n in range(2, len(parts) + 1))


@pytest.mark.parametrize("separator", ["\u2028", "\u2029", "\x85"])
def test_a_note_with_a_unicode_line_separator_syncs(tmp_path, separator):
    """A note holding U+2028, U+2029 or U+0085 goes through a bundle unchanged.

    RFC 8259 lets a JSON string hold these unescaped (only U+0000-U+001F, quote and backslash must be
    escaped), and canonical JSON writes them raw; Python's str.splitlines splits at them (its docs' table
    of line boundaries), so op lines are split at the line feed only.
    """
    a = Store(tmp_path / "a.db")
    b = Store(tmp_path / "b.db")
    introduce(b, a)
    beam_id = a.save_beam(a.create_site(name="Pasted").id, glulam())
    a.update_beam(beam_id, {"notes": f"first line{separator}second line"})
    export_bundle(a, tmp_path / "a.zip")
    with zipfile.ZipFile(tmp_path / "a.zip") as z:
        assert separator in z.read("ops.jsonl").decode()  # written raw, not escaped
    report = import_bundle(b, tmp_path / "a.zip")
    assert report.outcome == "applied", report.reason
    assert b.beam_record(beam_id)["notes"] == f"first line{separator}second line"
