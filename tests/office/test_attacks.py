"""Bad input and attacks get a clear refusal and change nothing on the hub (a test each)."""

import hashlib
import json

import pytest

from mobile.hub_client import HubError, request, sync
from storage.clock import uuid7
from storage.hubsync import outgoing
from storage.identity import Enrolment, enrolment, new_private_key, sign_op
from tests.core.beams import glulam


@pytest.fixture
def setup(served, tmp_path):
    a = served.tablet(tmp_path / "a.db", "A")
    b = served.tablet(tmp_path / "b.db", "B")
    site = a.create_site(name="Attacked")
    a.save_beam(site.id, glulam())
    assert sync(a).in_step
    a.save_beam(site.id, glulam(mark="T-2"))  # one more op, not yet pushed
    return served, a, b


def _push_body(ops_sigs, bundle_id=None):
    return json.dumps(
        {
            "bundle_id": bundle_id or uuid7(),
            "ops": [{"op": dict(op.row(), payload=op.payload, base=op.base), "sig": sig} for op, sig in ops_sigs],
        }
    ).encode()


def _refused(served, status, match, method, path, body=b"", auth=None):
    before = served.hub.state_fingerprint()
    with pytest.raises(HubError) as err:
        request(served.url, method, path, body, auth)
    assert err.value.status == status
    assert match in err.value.reason
    assert served.hub.state_fingerprint() == before  # nothing changed


def test_unknown_device_is_refused(setup):
    served, a, _ = setup
    stranger = Enrolment(served.url, uuid7(), new_private_key())
    ops = outgoing(a, enrolment(a.db)).ops
    _refused(served, 401, "unknown device", "POST", "/v1/push", _push_body(ops), stranger)


def test_revoked_device_is_refused_and_what_it_sent_stays(setup):
    served, a, _ = setup
    held = served.hub.digest()
    served.hub.revoke(a.device_id)
    ops = outgoing(a, enrolment(a.db)).ops
    _refused(served, 403, "revoked", "POST", "/v1/push", _push_body(ops), enrolment(a.db))
    _refused(served, 403, "revoked", "GET", "/v1/pull?cursor=0&limit=10", auth=enrolment(a.db))
    assert served.hub.digest() == held


def test_tampered_op_bad_signature_is_refused_whole(setup):
    served, a, _ = setup
    (op, sig), *_ = outgoing(a, enrolment(a.db)).ops
    forged = type(op)(**dict(op.__dict__, payload=dict(op.payload, b_mm=999)))
    _refused(served, 403, "signature does not verify", "POST", "/v1/push", _push_body([(forged, sig)]), enrolment(a.db))


def test_op_claiming_another_devices_origin_is_refused(setup):
    served, a, b = setup
    (op, _), *_ = outgoing(a, enrolment(a.db)).ops
    spoof = type(op)(**dict(op.__dict__, origin=a.device_id, seq=op.seq + 50))
    sig_by_b = sign_op(enrolment(b.db).key, spoof)  # b signs an op that claims to be a's
    _refused(
        served, 403, "signature does not verify", "POST", "/v1/push", _push_body([(spoof, sig_by_b)]), enrolment(b.db)
    )


def test_op_from_a_device_never_enrolled_is_refused(setup):
    served, a, b = setup
    (op, _), *_ = outgoing(a, enrolment(a.db)).ops
    ghost_key = new_private_key()
    ghost = type(op)(**dict(op.__dict__, origin=uuid7()))
    _refused(
        served,
        403,
        "never enrolled",
        "POST",
        "/v1/push",
        _push_body([(ghost, sign_op(ghost_key, ghost))]),
        enrolment(b.db),
    )


def test_replayed_bundle_changes_nothing_and_a_reused_bundle_id_is_refused(setup):
    served, a, _ = setup
    auth = enrolment(a.db)
    ops = outgoing(a, auth).ops
    body = _push_body(ops, "replayed-bundle-1")
    first = request(served.url, "POST", "/v1/push", body, auth)
    before = served.hub.state_fingerprint()
    assert request(served.url, "POST", "/v1/push", body, auth) == first  # the same answer, nothing new
    assert served.hub.state_fingerprint() == before
    _refused(
        served,
        409,
        "already pushed with other content",
        "POST",
        "/v1/push",
        _push_body(ops[:0], "replayed-bundle-1"),
        auth,
    )


def test_request_body_changed_after_signing_is_refused(setup):
    served, a, _ = setup
    auth = enrolment(a.db)
    body = _push_body(outgoing(a, auth).ops)
    from storage.identity import sign_request

    headers = sign_request(auth.key, auth.device_id, "POST", "/v1/push", body)
    import urllib.error
    import urllib.request

    before = served.hub.state_fingerprint()
    req = urllib.request.Request(served.url + "/v1/push", data=body + b" ", method="POST", headers=headers)
    with pytest.raises(urllib.error.HTTPError) as err:
        urllib.request.urlopen(req, timeout=10)
    assert err.value.code == 401
    err.value.close()
    assert served.hub.state_fingerprint() == before


def test_oversized_body_is_refused_before_it_is_read(setup):
    served, a, _ = setup
    import socket
    from urllib.parse import urlparse

    from office.app import MAX_BODY_BYTES
    from storage.identity import sign_request

    auth = enrolment(a.db)
    path = f"/v1/blobs/{'a' * 64}"
    headers = sign_request(auth.key, auth.device_id, "PUT", path, b"")
    head = f"PUT {path} HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Length: {MAX_BODY_BYTES + 1}\r\n"
    head += "".join(f"{k}: {v}\r\n" for k, v in headers.items()) + "\r\n"
    before = served.hub.state_fingerprint()
    url = urlparse(served.url)
    with socket.create_connection((url.hostname, url.port), timeout=10) as sock:
        sock.sendall(head.encode() + b"x" * 65536)  # the hub answers from the declared length alone
        answer = ""
        for _ in range(50):  # bounded: headers and body may come in separate reads
            chunk = sock.recv(4096).decode()
            answer += chunk
            if not chunk or answer.endswith("}"):
                break
    assert answer.startswith("HTTP/1.1 413")
    assert "larger than" in answer
    assert served.hub.state_fingerprint() == before


def test_blob_whose_bytes_do_not_match_its_hash_is_refused(setup):
    served, a, _ = setup
    sha = hashlib.sha256(b"the real photo").hexdigest()
    _refused(served, 400, "do not match", "PUT", f"/v1/blobs/{sha}", b"another photo", enrolment(a.db))


@pytest.mark.parametrize("cursor", ["abc", "-1", "99999", "1e3", "0x10"])
def test_malformed_cursor_is_refused(setup, cursor):
    served, a, _ = setup
    _refused(served, 400, "cursor", "GET", f"/v1/pull?cursor={cursor}&limit=10", auth=enrolment(a.db))


def test_malformed_push_is_refused(setup):
    served, a, _ = setup
    _refused(
        served,
        400,
        "malformed push",
        "POST",
        "/v1/push",
        b'{"bundle_id": "xxxxxxxxxx", "ops": [{"op": {}, "sig": "x"}]}',
        enrolment(a.db),
    )
