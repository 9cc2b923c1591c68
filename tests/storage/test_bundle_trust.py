"""File bundles are signed by the exporting device's Ed25519 key and every op by its origin's key.

The keys a tablet trusts are the ones the office hub listed (the point of trust); here the hub's list is
written with ``introduce`` and the suite's shortcut trust is turned off (``strict``).
"""

import io
import json
import zipfile

import pytest

from storage import Store, identity
from storage.bundle import export_bundle, import_bundle
from storage.store import DEMO_FIRM_KEY
from tests.core.beams import glulam
from tests.storage.signing import introduce, signed_bundle


@pytest.fixture(autouse=True)
def strict(monkeypatch):
    """Only the keys a hub listed (and the device's own) are trusted."""
    monkeypatch.setattr(identity, "trusted_key", identity.trusted_key.__wrapped__)


def _state(store):
    """Every table but the import log (a refused attempt is logged, and that is all it may change)."""
    tables = [r[0] for r in store.db.execute("SELECT name FROM sqlite_master WHERE type='table' ORDER BY name")]
    kept = [t for t in tables if t not in ("bundle_log", "sqlite_sequence")]
    return {t: store.db.execute(f"SELECT * FROM {t} ORDER BY 1").fetchall() for t in kept}


@pytest.fixture
def tablets(tmp_path):
    a, b, c = (Store(tmp_path / f"{n}.db") for n in "abc")
    site = a.create_site(name="Signed")
    a.save_beam(site.id, glulam())
    return a, b, c, tmp_path


def test_bundle_from_a_listed_device_is_applied(tablets):
    a, b, _c, tmp = tablets
    introduce(b, a)
    export_bundle(a, tmp / "a.zip")
    report = import_bundle(b, tmp / "a.zip")
    assert report.outcome == "applied", report
    assert b.digest() == a.digest()
    # each op's origin signature is kept, so b can relay a's work to the hub or to another tablet
    assert b.db.execute("SELECT count(*) FROM op_sig WHERE origin=?", [a.device_id]).fetchone()[0] == 2


def test_bundle_from_an_unknown_device_is_refused_and_changes_nothing(tablets):
    a, b, _c, tmp = tablets
    export_bundle(a, tmp / "a.zip")
    before = _state(b)
    report = import_bundle(b, tmp / "a.zip")
    assert report.outcome == "refused"
    assert "not enrolled" in report.reason
    assert _state(b) == before


def test_bundle_from_a_revoked_device_is_refused_and_changes_nothing(tablets):
    a, b, _c, tmp = tablets
    introduce(b, revoked=(a,))
    export_bundle(a, tmp / "a.zip")
    before = _state(b)
    report = import_bundle(b, tmp / "a.zip")
    assert report.outcome == "refused"
    assert "revoked" in report.reason
    assert _state(b) == before


def _entries(path):
    z = zipfile.ZipFile(path)
    return {n: z.read(n) for n in z.namelist()}


def _zip(entries):
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        for name, content in entries.items():
            z.writestr(name, content)
    return buf.getvalue()


def test_tampered_op_with_hashes_recomputed_is_refused(tablets):
    """Someone edits an op and fixes the manifest's hash: the exporter's signature no longer covers it."""
    import hashlib

    a, b, _c, tmp = tablets
    introduce(b, a)
    export_bundle(a, tmp / "a.zip")
    entries = _entries(tmp / "a.zip")
    ops = [json.loads(line) for line in entries["ops.jsonl"].decode().splitlines()]
    ops[-1]["payload"]["b_mm"] = 80
    body = "".join(json.dumps(o, sort_keys=True, separators=(",", ":")) + "\n" for o in ops).encode()
    manifest = json.loads(entries["manifest.json"])
    manifest["ops_sha256"] = hashlib.sha256(body).hexdigest()
    entries["ops.jsonl"] = body
    entries["manifest.json"] = json.dumps(manifest, sort_keys=True, separators=(",", ":")).encode()
    (tmp / "t.zip").write_bytes(_zip(entries))
    before = _state(b)
    report = import_bundle(b, tmp / "t.zip")
    assert report.outcome == "refused"
    assert "signature" in report.reason
    assert _state(b) == before


def test_relayed_op_altered_by_the_relaying_device_is_refused(tablets):
    """Tablet b relays a's ops to c; b rewrites one of a's ops and signs the bundle with its own valid key."""
    a, b, c, tmp = tablets
    introduce(b, a)
    introduce(c, a, b)
    export_bundle(a, tmp / "a.zip")
    assert import_bundle(b, tmp / "a.zip").outcome == "applied"
    export_bundle(b, tmp / "b.zip")
    assert import_bundle(c, tmp / "b.zip").outcome == "applied"  # an honest relay verifies by a's key
    entries = _entries(tmp / "b.zip")
    ops = [json.loads(line) for line in entries["ops.jsonl"].decode().splitlines()]
    ops[-1]["payload"]["b_mm"] = 80  # a's op, changed by b
    blobs = {n: v for n, v in entries.items() if n.startswith("blobs/")}
    forged = signed_bundle(b, json.loads(entries["manifest.json"]), ops, blobs)  # every line signed by b
    fresh = Store(tmp / "d.db")
    introduce(fresh, a, b)
    (tmp / "f.zip").write_bytes(forged)
    before = _state(fresh)
    report = import_bundle(fresh, tmp / "f.zip")
    assert report.outcome == "refused"
    assert f"{a.device_id[:8]}:" in report.reason
    assert "signature does not verify" in report.reason
    assert _state(fresh) == before


def test_a_real_database_never_trusts_the_demo_key(tmp_path):
    demo = Store(tmp_path / "demo.db", firm_key=DEMO_FIRM_KEY)
    demo.create_site(name="Demo")
    export_bundle(demo, tmp_path / "demo.zip")
    real = Store(tmp_path / "real.db", firm_key="a-firms-own-key")
    report = import_bundle(real, tmp_path / "demo.zip")
    assert report.outcome == "refused"
    assert "not enrolled" in report.reason
    other_demo = Store(tmp_path / "demo2.db", firm_key=DEMO_FIRM_KEY)
    assert import_bundle(other_demo, tmp_path / "demo.zip").outcome == "applied"


def test_trust_list_with_an_unreadable_key_changes_nothing(tablets):
    _a, b, _c, _tmp = tablets
    introduce(b, _a)
    before = identity.trusted_devices(b.db)
    with pytest.raises(identity.SignatureError, match="32"):
        identity.trust_devices(b.db, [{"device_id": "x", "public_key": "AAAA", "name": "bad"}], at_ms=1)
    assert identity.trusted_devices(b.db) == before


def test_exporters_own_op_with_a_bad_signature_is_applied_but_never_relayed(tablets):
    """Its manifest signature vouches for its own ops; their own signatures are checked before any relay."""
    from tests.storage.signing import sign_bundle

    a, b, c, tmp = tablets
    introduce(b, a)
    introduce(c, a, b)
    export_bundle(a, tmp / "a.zip")
    entries = _entries(tmp / "a.zip")
    ops = [json.loads(line) for line in entries["ops.jsonl"].decode().splitlines()]
    key = identity.device_key(a.db)
    (tmp / "w.zip").write_bytes(sign_bundle(key, json.loads(entries["manifest.json"]), ops, {}, wrong_op_sig=1))
    assert import_bundle(b, tmp / "w.zip").outcome == "applied"
    assert b.digest() == a.digest()
    export_bundle(b, tmp / "b.zip")
    assert import_bundle(c, tmp / "b.zip").outcome == "applied"
    held = c.db.execute("SELECT seq FROM op WHERE origin=? ORDER BY seq", [a.device_id]).fetchall()
    assert held == [(1,)]  # a's op 2 carried a signature that is not a's: b did not pass it on
