"""The tablet's HTTP client for the office hub (sync.md 3.9), on the standard library only.

Session order: hello -> blobs/missing -> blob PUTs -> push -> pull until ``more`` is false. Push
before pull, so the pulled pages already hold the hub's view of our own ops.
"""

from __future__ import annotations

import hashlib
import json
import ssl
import time
import urllib.error
import urllib.request
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

from storage import Store
from storage.bundle import Progress
from storage.clock import uuid7
from storage.db import SCHEMA_VERSION
from storage.hubsync import (
    PageRefused,
    adopt_enrolment,
    adopt_holdings,
    apply_page,
    first_newer_schema,
    hub_cursor,
    log_sync,
    lost_holdings,
    meet_hub,
    outgoing,
    record_push_answer,
    retry_set_aside,
    unlisted_origins,
)
from storage.identity import Enrolment, b64, device_key, enrolment, public_text, sign_request, trust_devices

TIMEOUT_S = 20.0
PUSH_BATCH = 2000
PULL_LIMIT = 2000
SKEW_WARN_MS = 2 * 60 * 1000
BLOB_KEYS = ("sha256", "pdf_sha256", "evidence_sha256")


class HubError(Exception):
    """The hub refused a request or could not be reached; ``reason`` is for a person."""

    def __init__(self, reason: str, status: int | None = None):
        """Keep the reason and the HTTP status (None when the hub was not reached)."""
        super().__init__(reason)
        self.reason = reason
        self.status = status


@dataclass
class SyncResult:
    """What one sync did."""

    pushed: int = 0
    pulled_new: int = 0
    blobs_sent: int = 0
    rejected: list[dict[str, Any]] = field(default_factory=list)
    unsigned_relays: int = 0
    skew_ms: int = 0
    hub_schema_older: int | None = None  # the hub's record schema when older than this app's: nothing was sent
    newer_waiting: bool = False  # the hub holds changes written by a newer app: pulling stopped before them

    @property
    def in_step(self) -> bool:
        """True when the hub took everything and nothing waits."""
        return not self.rejected and self.hub_schema_older is None and not self.newer_waiting

    @property
    def version_words(self) -> str:
        """Why the sync stopped short between app versions, in words ('' when it did not)."""
        if self.hub_schema_older is not None:
            return (
                "nothing was sent: the office hub runs an older bracewalk than this tablet, so your changes stay "
                "here until the office updates it"
            )
        if self.newer_waiting:
            return "the office holds changes made with a newer bracewalk: update this app to receive them"
        return ""


def _silent(fraction: float, what: str) -> None:
    """No progress display."""


def _context(url: str, ca_pem: str = "") -> ssl.SSLContext | None:
    """TLS for https: the system's trust store, or only the office's own certificate when one was given."""
    if not url.startswith("https://"):
        return None
    return ssl.create_default_context(cadata=ca_pem) if ca_pem else ssl.create_default_context()


def request(
    url: str,
    method: str,
    path: str,
    body: bytes = b"",
    auth: Enrolment | None = None,
    extra: dict[str, str] | None = None,
    ca_pem: str = "",
) -> bytes:
    """One HTTP call; raises HubError with the hub's reason on a refusal or a network failure."""
    headers = {"Content-Type": "application/json"} | (extra or {})
    if auth is not None:
        headers |= sign_request(auth.key, auth.device_id, method, path, body, auth.clock_offset_ms)
    req = urllib.request.Request(
        url.rstrip("/") + path, data=body if method != "GET" else None, method=method, headers=headers
    )
    try:
        with urllib.request.urlopen(
            req, timeout=TIMEOUT_S, context=_context(url, ca_pem or (auth.ca_pem if auth else ""))
        ) as resp:
            data: bytes = resp.read()
            return data
    except urllib.error.HTTPError as exc:
        try:
            reason = json.loads(exc.read()).get("detail", exc.reason)
        except ValueError:
            reason = exc.reason
        finally:
            exc.close()
        msg = f"the office hub refused: {reason}"
        raise HubError(msg, exc.code) from exc
    except (urllib.error.URLError, OSError) as exc:
        msg = f"cannot reach the office hub at {url}: {getattr(exc, 'reason', exc)}"
        raise HubError(msg) from exc


def enroll(store: Store, url: str, code: str, ca_pem: str = "") -> dict[str, Any]:
    """Enrol this tablet's key pair (made at install, or now) with a one-time code; keep the enrolment.

    The same key signs its file bundles and its ops. ``ca_pem``: the office's self-signed certificate,
    trusted for this hub only.
    """
    key = device_key(store.db)
    proof = b64(key.sign(f"enroll\n{code}\n{store.device_id}".encode()))
    body = json.dumps({"code": code, "device_id": store.device_id, "public_key": public_text(key), "proof": proof})
    answer: dict[str, Any] = json.loads(request(url, "POST", "/v1/enroll", body.encode(), ca_pem=ca_pem))
    adopt_enrolment(store, url.rstrip("/"), answer["device_id"], key, answer["bundle_key"], ca_pem)
    auth = enrolment(store.db)
    if auth is not None:
        hello = json.loads(request(auth.hub_url, "GET", "/v1/hub", ca_pem=auth.ca_pem))
        learn_devices(store, _timed_by_hub(auth, hello), int(time.time() * 1000))
    return answer


def _timed_by_hub(auth: Enrolment, hello: dict[str, Any]) -> Enrolment:
    """The enrolment with its requests timed by the hub's clock, as its hello gave it.

    The hub refuses a request more than 10 minutes from its own clock (replays); a tablet whose clock
    was set by hand on site was refused every sync, with the two times in milliseconds as the reason.
    """
    return replace(auth, clock_offset_ms=int(hello["server_time_ms"]) - int(time.time() * 1000))


def learn_devices(store: Store, auth: Enrolment, now_ms: int) -> int:
    """Fetch the enrolled devices' public keys from the hub (the point of trust) and keep them; how many.

    File bundles and pulled ops verify by these keys; a device revoked at the office is marked so.
    """
    answer = json.loads(request(auth.hub_url, "GET", "/v1/devices", auth=auth))
    return trust_devices(store.db, list(answer["devices"]), now_ms)


def sync(
    store: Store,
    progress: Progress | None = None,
    now_ms: Callable[[], int] | None = None,
    include_demo: bool = False,
) -> SyncResult:
    """Push what the hub lacks, then pull until up to date. Raises HubError when refused or unreachable.

    The built-in demo site's changes are pushed only when ``include_demo`` (``bracewalk demo`` asks).
    """
    tell = progress or _silent
    clock = now_ms or (lambda: int(time.time() * 1000))
    auth = enrolment(store.db)
    if auth is None:
        msg = "this tablet is not enrolled at an office hub (enter the hub address and a code)"
        raise HubError(msg)
    result = SyncResult()
    try:
        _sync(store, auth, result, tell, clock, include_demo)
    except HubError as exc:
        log_sync(store, "unreachable" if exc.status is None else "refused", exc.reason, clock())
        raise
    if result.rejected:
        n = len(result.rejected)
        log_sync(store, "refused", f"{n} change{'s' if n != 1 else ''} held at the office", clock())
    elif result.version_words:
        log_sync(store, "refused", result.version_words, clock())
    else:
        log_sync(store, "in_step", f"sent {result.pushed}, received {result.pulled_new}", clock())
    return result


def _sync(
    store: Store, auth: Enrolment, result: SyncResult, tell: Progress, clock: Callable[[], int], include_demo: bool
) -> None:
    tell(0.0, "contacting the office")
    hello = json.loads(request(auth.hub_url, "GET", "/v1/hub", ca_pem=auth.ca_pem))
    result.skew_ms = int(hello["server_time_ms"]) - clock()
    auth = _timed_by_hub(auth, hello)
    epoch = hello.get("epoch")  # None from a hub made before epochs: its hub_seq and holdings are the only signs
    if meet_hub(store, epoch, int(hello["hub_seq"]) if "hub_seq" in hello else None):
        _adopt_holdings(store, auth, epoch)  # the hub was restored: push what it lacks, pull from the start
    learn_devices(store, auth, clock())
    _retry_set_aside(store, auth, result)
    for _ in range(2):  # a second round only when the hub turned out to lack what it had acknowledged
        if int(hello.get("schema_max", SCHEMA_VERSION)) < SCHEMA_VERSION:
            # an older hub would not know this app's fields: keep every change here until the office updates it
            result.hub_schema_older = int(hello["schema_max"])
        else:
            _push(store, auth, result, tell, clock, include_demo, epoch)
        if not _pull(store, auth, result, tell, clock, epoch):
            break
    tell(1.0, "in step with the office")


def _same_history(answer: dict[str, Any], epoch: str | None) -> None:
    """Refuse an answer from another hub history than the hello's (the hub was restored during this sync)."""
    if epoch is not None and answer.get("epoch", epoch) != epoch:
        msg = "the office hub was restored from a backup during this sync; nothing more was recorded: sync again"
        raise HubError(msg, 409)


def _adopt_holdings(store: Store, auth: Enrolment, epoch: str | None) -> None:
    """Ask the hub what it holds per origin (a pull of one op from the start) and push from there."""
    page = json.loads(request(auth.hub_url, "GET", "/v1/pull?cursor=0&limit=1", auth=auth))
    _same_history(page, epoch)
    adopt_holdings(store, page["seen"])


def _pull(
    store: Store, auth: Enrolment, result: SyncResult, tell: Progress, clock: Callable[[], int], epoch: str | None
) -> bool:
    """Apply pages until the hub has no more (or holds changes of a newer app), fetching their blobs.

    A page with ops of a device the device list did not name (enrolled since it was fetched, during
    this sync) has the list fetched once more before it is applied, so they are not set aside.

    A page whose hub holds fewer ops of some origin than it acknowledged (``lost_holdings``: restored
    without a new epoch) is not applied: the cursors go to what it holds and to the start, and True
    is returned so the caller pushes the lost ops again and pulls once more.
    """
    more = True
    relisted = False
    while more:
        cursor = hub_cursor(store)
        tell(0.5, f"receiving changes after {cursor}")
        page = json.loads(request(auth.hub_url, "GET", f"/v1/pull?cursor={cursor}&limit={PULL_LIMIT}", auth=auth))
        _same_history(page, epoch)
        if lost_holdings(store, page["seen"]):
            adopt_holdings(store, page["seen"])
            return True
        if not relisted and unlisted_origins(store, page):
            learn_devices(store, auth, clock())
            relisted = True
        try:
            result.pulled_new += apply_page(store, page, clock())
        except PageRefused as exc:
            raise HubError(str(exc), 409) from exc
        newer = first_newer_schema(page)
        _fetch_blobs(store, auth, [item["op"]["payload"] for item in page["ops"][:newer]])
        result.newer_waiting = newer is not None
        more = bool(page["more"]) and not result.newer_waiting
    return False


def _retry_set_aside(store: Store, auth: Enrolment, result: SyncResult) -> None:
    """Apply pulled ops set aside because their device was not listed, now that the list was fetched again."""
    try:
        applied = retry_set_aside(store)
    except PageRefused as exc:
        raise HubError(str(exc), 409) from exc
    result.pulled_new += len(applied)
    _fetch_blobs(store, auth, [op.payload for op in applied])


def _push(
    store: Store,
    auth: Enrolment,
    result: SyncResult,
    tell: Progress,
    clock: Callable[[], int],
    include_demo: bool,
    epoch: str | None,
) -> None:
    """Send every change the hub lacks, in batches, recording what it took and what it refused.

    An answer showing the hub lost ops it had acknowledged moves the cursors down to what it holds
    (``record_push_answer``): the next batches carry the lost ops again.
    """
    seen: set[tuple[str, int]] = set()
    while True:
        out = outgoing(store, auth, PUSH_BATCH, frozenset(seen), include_demo)
        result.unsigned_relays = out.unsigned_relays
        batch = out.ops
        if not batch:
            break
        tell(0.1, f"sending {len(batch)} changes")
        result.blobs_sent += _send_blobs(store, auth, [op for op, _ in batch])
        body = json.dumps(
            {"bundle_id": uuid7(), "ops": [{"op": _op_json(op), "sig": sig} for op, sig in batch]}
        ).encode()
        answer = json.loads(request(auth.hub_url, "POST", "/v1/push", body, auth))
        _same_history(answer, epoch)
        record_push_answer(store, answer, batch, clock())
        result.pushed += len(batch)
        result.rejected.extend(r for r in answer["rejected"] if r not in result.rejected)
        seen.update((op.origin, op.seq) for op, _ in batch)


def _op_json(op: Any) -> dict[str, Any]:
    row: dict[str, Any] = op.row()
    row["payload"], row["base"] = op.payload, op.base
    return row


def _send_blobs(store: Store, auth: Enrolment, ops: list[Any]) -> int:
    shas = sorted({op.payload[k] for op in ops for k in BLOB_KEYS if op.payload.get(k)})
    shas = [s for s in shas if store.blob_path(s).exists()]
    if not shas:
        return 0
    body = json.dumps({"sha256": shas}).encode()
    missing = json.loads(request(auth.hub_url, "POST", "/v1/blobs/missing", body, auth))["sha256"]
    for sha in missing:
        request(auth.hub_url, "PUT", f"/v1/blobs/{sha}", store.blob_path(sha).read_bytes(), auth)
    return len(missing)


def _fetch_blobs(store: Store, auth: Enrolment, payloads: list[dict[str, Any]]) -> None:
    """Fetch the blobs (photos, notices, evidence) these ops' payloads name that this tablet lacks."""
    for payload in payloads:
        for k in BLOB_KEYS:
            sha = payload.get(k)
            if sha and not store.blob_path(sha).exists():
                try:
                    data = request(auth.hub_url, "GET", f"/v1/blobs/{sha}", auth=auth)
                except HubError as exc:
                    if exc.status == 404:  # not at the hub yet: the record shows "pending" until it arrives
                        continue
                    raise
                if hashlib.sha256(data).hexdigest() == sha:
                    store.put_blob(data, "application/octet-stream")
