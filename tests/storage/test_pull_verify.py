"""A tablet verifies each pulled op by its origin device's key, as the hub listed it, before applying it.

What fails is set aside in ``pull_quarantine`` (never applied, never dropped) and said in words.
"""

import hashlib

import pytest

from storage import Store, identity
from storage.hubsync import SetAside, apply_page, hub_cursor, pull_quarantine, pull_quarantine_words, retry_set_aside
from storage.oplog import all_ops, canonical
from tests.core.beams import glulam
from tests.storage.signing import introduce


@pytest.fixture(autouse=True)
def strict(monkeypatch):
    """Only the keys a hub listed (and the device's own) are trusted."""
    monkeypatch.setattr(identity, "trusted_key", identity.trusted_key.__wrapped__)


def _page(items, cursor=0):
    """A page as the hub serves it: each op with its signature, a checksum over the ops."""
    ops = []
    for n, (op, sig) in enumerate(items, start=cursor + 1):
        row = op.row()
        row["payload"], row["base"] = op.payload, op.base
        ops.append({"hub_seq": n, "sig": sig, "op": row})
    body = canonical([o["op"] for o in ops]).encode()
    return {
        "ops": ops,
        "next_cursor": cursor + len(ops),
        "more": False,
        "ops_sha256": hashlib.sha256(body).hexdigest(),
        "seen": {},
    }


def _signed(store):
    """Every op of ``store`` with its origin signature."""
    key = identity.device_key(store.db)
    return [(op, identity.sign_op(key, op)) for op in all_ops(store.db)]


@pytest.fixture
def colleague(tmp_path):
    a = Store(tmp_path / "a.db")
    site = a.create_site(name="Pulled")
    a.save_beam(site.id, glulam())
    return a


def test_ops_signed_by_a_listed_device_are_applied(tmp_path, colleague):
    t = Store(tmp_path / "t.db")
    introduce(t, colleague)
    assert apply_page(t, _page(_signed(colleague)), now_ms=1) == 2
    assert t.digest() == colleague.digest()
    assert pull_quarantine(t) == []


def test_op_with_a_bad_signature_is_set_aside_and_the_rest_applied(tmp_path, colleague):
    t = Store(tmp_path / "t.db")
    introduce(t, colleague)
    items = _signed(colleague)
    forger = identity.new_private_key()
    site_op, beam_op = items[0][0], items[1][0]
    items[1] = (beam_op, identity.sign_op(forger, beam_op))  # the beam signed by a key that is not its origin's
    assert apply_page(t, _page(items), now_ms=5) == 1
    assert t.db.execute("SELECT count(*) FROM beam").fetchone()[0] == 0  # never applied
    assert t.db.execute("SELECT count(*) FROM op WHERE seq=?", [beam_op.seq]).fetchone()[0] == 0
    assert t.site(site_op.record_id).name == "Pulled"
    held = pull_quarantine(t)
    assert [(q["origin"], q["seq"], q["entity"]) for q in held] == [(colleague.device_id, beam_op.seq, "beam")]
    words = pull_quarantine_words(t)
    assert len(words) == 1
    assert "not applied" in words[0]
    assert "signature does not verify" in words[0]
    assert hub_cursor(t) == 2  # the page is done: the next pull starts after it


def test_op_from_a_device_the_hub_never_listed_is_set_aside(tmp_path, colleague):
    t = Store(tmp_path / "t.db")
    assert apply_page(t, _page(_signed(colleague)), now_ms=5) == 0
    assert {q["reason"].split(" is ")[0] for q in pull_quarantine(t)} == {f"device {colleague.device_id}"}
    assert t.db.execute("SELECT count(*) FROM op").fetchone()[0] == 0


def test_ops_of_a_since_revoked_device_still_verify(tmp_path, colleague):
    """The hub accepted them before the revocation; they verify by the key it listed (marked revoked)."""
    t = Store(tmp_path / "t.db")
    introduce(t, revoked=(colleague,))
    assert apply_page(t, _page(_signed(colleague)), now_ms=5) == 2
    assert pull_quarantine(t) == []


def test_ops_of_an_unlisted_device_are_applied_once_the_list_names_it(tmp_path, colleague):
    """Set aside while the hub's list did not name their device (enrolled since): retried after a new list."""
    t = Store(tmp_path / "t.db")
    apply_page(t, _page(_signed(colleague)), now_ms=5)
    assert [q["seq"] for q in pull_quarantine(t)] == [1, 2]
    assert retry_set_aside(t) == []  # still not listed: they stay
    assert [q["seq"] for q in pull_quarantine(t)] == [1, 2]
    introduce(t, colleague)
    assert [op.seq for op in retry_set_aside(t)] == [1, 2]
    assert pull_quarantine(t) == []
    assert t.digest() == colleague.digest()
    assert t.db.execute("SELECT count(*) FROM op_sig WHERE origin=?", [colleague.device_id]).fetchone()[0] == 2


def test_a_bad_signature_is_not_retried(tmp_path, colleague):
    t = Store(tmp_path / "t.db")
    introduce(t, colleague)
    items = _signed(colleague)
    items[1] = (items[1][0], identity.sign_op(identity.new_private_key(), items[1][0]))
    apply_page(t, _page(items), now_ms=5)
    assert retry_set_aside(t) == []
    assert [(q["seq"], q["at_ms"]) for q in pull_quarantine(t)] == [(2, 5)]


def test_ops_set_aside_before_their_cause_was_kept_are_tried_again(tmp_path, colleague):
    """A database from before the cause was kept: its set-aside ops are tried once more, and keep their cause then."""
    t = Store(tmp_path / "t.db")
    introduce(t, colleague)
    items = _signed(colleague)
    items[1] = (items[1][0], identity.sign_op(identity.new_private_key(), items[1][0]))
    apply_page(t, _page(items, cursor=0), now_ms=5)
    t.db.execute("DELETE FROM pull_quarantine_cause")
    assert retry_set_aside(t) == []  # the signature still does not verify
    assert t.db.execute("SELECT cause FROM pull_quarantine_cause").fetchall() == [(SetAside.SIGNATURE.value,)]
    t2 = Store(tmp_path / "t2.db")
    apply_page(t2, _page(_signed(colleague)), now_ms=5)  # unlisted
    t2.db.execute("DELETE FROM pull_quarantine_cause")
    introduce(t2, colleague)
    assert [op.seq for op in retry_set_aside(t2)] == [1, 2]
    assert pull_quarantine(t2) == []
