"""The hub's HTTP service (sync.md 3.9): FastAPI routers for the hub, enrolment, blobs and sync.

Every call but ``GET /v1/hub`` and ``POST /v1/enroll`` is authenticated by the device: its request
is signed with the device's Ed25519 key (``storage.identity.sign_request``). Refusals answer a JSON
``{"detail": reason}`` with a 4xx status and change nothing.
"""

from __future__ import annotations

import hashlib
import json
import re
from typing import Annotated, Any

from fastapi import APIRouter, Depends, FastAPI, HTTPException, Query, Request, Response
from fastapi.responses import JSONResponse
from pydantic import BaseModel, ConfigDict, Field, ValidationError

from office.hubstore import HubRefused, HubStore
from office.pgdb import DatabaseUnavailable
from storage.db import SCHEMA_VERSION
from storage.identity import SignatureError, load_public, unb64, verify_request
from storage.oplog import Op

MAX_BODY_BYTES = 16 * 1024 * 1024
MAX_PUSH_OPS = 20_000
SHA_RE = re.compile(r"^[0-9a-f]{64}$")


class Strict(BaseModel):
    """Request and answer models refuse unknown keys."""

    model_config = ConfigDict(extra="forbid")


class HubHello(Strict):
    """Answer of ``GET /v1/hub``: who the hub is, its time, what it accepts."""

    hub_id: str
    server_time_ms: int
    schema_min: int
    schema_max: int
    max_body_bytes: int
    hub_seq: int  # the last hub_seq handed out: a tablet whose cursor is beyond it meets a restored hub
    epoch: str  # the identity of the hub's history (a restore gives a new one): a tablet's cursors belong to one


class EnrollRequest(Strict):
    """A tablet enrolling: its one-time code, its device id, its new public key and proof it holds the key."""

    code: str = Field(min_length=4, max_length=64)
    device_id: str = Field(min_length=8, max_length=64)
    public_key: str = Field(min_length=40, max_length=64)
    proof: str = Field(description="signature of 'enroll\\n<code>\\n<device_id>' by the new key")


class EnrollAnswer(Strict):
    """What the tablet keeps after enrolling."""

    device_id: str
    hub_id: str
    name: str
    person: str
    role: str
    bundle_key: str


class DeviceKey(Strict):
    """An enrolled device and its public key, as tablets learn them (the hub is the point of trust)."""

    device_id: str
    name: str
    public_key: str
    revoked_ms: int | None
    role: str = ""  # reviewer, technician or office: a tablet judges a bundle's status moves by it


class DeviceList(Strict):
    """Every device enrolled at this hub, revoked ones included (marked)."""

    devices: list[DeviceKey]


class BlobList(Strict):
    """A list of blob hashes."""

    sha256: list[str] = Field(max_length=10_000)


class SignedOp(Strict):
    """One op as pushed or pulled, with its origin device's signature."""

    op: dict[str, Any]
    sig: str = Field(max_length=200)
    hub_seq: int | None = None


class PushRequest(Strict):
    """A bundle of signed ops; ``bundle_id`` makes the push idempotent."""

    bundle_id: str = Field(min_length=8, max_length=64)
    ops: list[SignedOp] = Field(max_length=MAX_PUSH_OPS)


class PushAnswerModel(Strict):
    """Which ops were merged, which were quarantined and why, and the hub's position after."""

    accepted: dict[str, int]
    rejected: list[dict[str, Any]]
    hub_seq_after: int
    seen: dict[str, int]
    epoch: str = ""  # the hub's history this answer belongs to (HubHello.epoch)


class PullAnswer(Strict):
    """One page of ops with hub_seq > cursor."""

    ops: list[SignedOp]
    next_cursor: int
    more: bool
    ops_sha256: str
    seen: dict[str, int]  # per origin, the highest seq up to which the hub holds every op
    epoch: str = ""  # the hub's history this page belongs to (HubHello.epoch)


def create_app(hub: HubStore) -> FastAPI:
    """The ASGI app serving ``hub``."""
    # no schema or docs served: the protocol is written down in the project's contract, not browsed
    app = FastAPI(title="bracewalk office hub", version="1", docs_url=None, redoc_url=None, openapi_url=None)
    app.state.hub = hub

    @app.exception_handler(HubRefused)
    async def refused(request: Request, exc: HubRefused) -> JSONResponse:
        return JSONResponse({"detail": exc.reason}, status_code=exc.status)

    @app.exception_handler(DatabaseUnavailable)
    async def unavailable(request: Request, exc: DatabaseUnavailable) -> JSONResponse:
        # nothing was acknowledged: the tablet tries again (pushes are idempotent by bundle id)
        return JSONResponse({"detail": f"the hub's database is unavailable, try again: {exc}"}, status_code=503)

    @app.middleware("http")
    async def limit_body(request: Request, call_next: Any) -> Response:
        declared = request.headers.get("content-length")
        if declared is not None and (not declared.isdigit() or int(declared) > MAX_BODY_BYTES):
            return JSONResponse({"detail": f"body larger than {MAX_BODY_BYTES} bytes"}, status_code=413)
        response: Response = await call_next(request)
        return response

    app.include_router(_hub_router())
    app.include_router(_blob_router())
    app.include_router(_sync_router())
    from office import pages

    pages.install(app)
    return app


def _hub(request: Request) -> HubStore:
    hub: HubStore = request.app.state.hub
    return hub


async def _body(request: Request) -> bytes:
    chunks = []
    size = 0
    async for chunk in request.stream():
        size += len(chunk)
        if size > MAX_BODY_BYTES:
            raise HubRefused(413, f"body larger than {MAX_BODY_BYTES} bytes")
        chunks.append(chunk)
    return b"".join(chunks)


async def authenticated_device(request: Request) -> str:
    """The device that signed this request (401/403 otherwise); the body is read and kept for the route."""
    hub = _hub(request)
    body = await _body(request)
    request.state.body = body
    device_id = request.headers.get("x-bracewalk-device", "")
    stamp = request.headers.get("x-bracewalk-time", "")
    sig = request.headers.get("x-bracewalk-signature", "")
    if not (device_id and stamp.isdigit() and sig):
        raise HubRefused(401, "this call needs a device signature (enrol the tablet first)")
    device = hub.active_device(device_id)
    path = request.url.path + (f"?{request.url.query}" if request.url.query else "")
    try:
        verify_request(load_public(device.public_key), request.method, path, int(stamp), body, sig, hub.clock_ms())
    except SignatureError as exc:
        raise HubRefused(401, str(exc)) from exc
    return device_id


Device = Annotated[str, Depends(authenticated_device)]


def _hub_router() -> APIRouter:
    router = APIRouter(prefix="/v1", tags=["hub"])

    @router.get("/hub")
    def hello(request: Request) -> HubHello:
        """Start of every session: the hub's id and time (for the clock-skew check), what it accepts."""
        hub = _hub(request)
        return HubHello(
            hub_id=hub.hub_id,
            server_time_ms=hub.clock_ms(),
            schema_min=1,
            schema_max=SCHEMA_VERSION,
            max_body_bytes=MAX_BODY_BYTES,
            hub_seq=hub.hub_seq(),
            epoch=hub.epoch,
        )

    @router.post("/enroll")
    def enroll(request: Request, body: EnrollRequest) -> EnrollAnswer:
        """Bind a tablet's new public key to the person and role of a one-time code."""
        from cryptography.exceptions import InvalidSignature

        hub = _hub(request)
        try:
            load_public(body.public_key).verify(unb64(body.proof), f"enroll\n{body.code}\n{body.device_id}".encode())
        except (SignatureError, InvalidSignature) as exc:
            raise HubRefused(400, "enrolment proof does not verify with the public key sent") from exc
        dev = hub.enroll(body.code, body.device_id, body.public_key)
        return EnrollAnswer(
            device_id=dev.device_id,
            hub_id=hub.hub_id,
            name=dev.name,
            person=dev.person,
            role=dev.role,
            bundle_key=hub.bundle_key,
        )

    @router.get("/devices")
    def devices(request: Request, device: Device) -> DeviceList:
        """The enrolled devices' public keys: a tablet verifies file bundles and pulled ops by them."""
        return DeviceList(
            devices=[
                DeviceKey(
                    device_id=d.device_id, name=d.name, public_key=d.public_key, revoked_ms=d.revoked_ms, role=d.role
                )
                for d in _hub(request).devices()
            ]
        )

    return router


def _blob_router() -> APIRouter:
    router = APIRouter(prefix="/v1/blobs", tags=["blobs"])

    @router.post("/missing")
    def missing(request: Request, device: Device) -> BlobList:
        """The subset of the listed blobs the hub lacks."""
        try:
            asked = BlobList.model_validate_json(request.state.body)
        except ValidationError as exc:
            raise HubRefused(400, f"bad blob list: {exc.errors()[0]['msg']}") from exc
        bad = [s for s in asked.sha256 if not SHA_RE.match(s)]
        if bad:
            raise HubRefused(400, f"not a SHA-256: {bad[0][:70]!r}")
        return BlobList(sha256=_hub(request).missing_blobs(asked.sha256))

    @router.put("/{sha256}")
    def put_blob(sha256: str, request: Request, device: Device) -> Response:
        """Store a blob whose bytes hash to ``sha256`` (201 new, 200 already held)."""
        if not SHA_RE.match(sha256):
            raise HubRefused(400, "blob name is not a SHA-256")
        new = _hub(request).put_blob(sha256, request.state.body, device)
        return Response(status_code=201 if new else 200)

    @router.get("/{sha256}")
    def get_blob(sha256: str, request: Request, device: Device) -> Response:
        """A blob's bytes."""
        if not SHA_RE.match(sha256):
            raise HubRefused(400, "blob name is not a SHA-256")
        content = _hub(request).read_blob(sha256)
        if content is None:
            raise HTTPException(404, "no such blob")
        return Response(content, media_type="application/octet-stream")

    return router


def _sync_router() -> APIRouter:
    router = APIRouter(prefix="/v1", tags=["sync"])

    @router.post("/push")
    def push(request: Request, device: Device) -> PushAnswerModel:
        """Merge a bundle of signed ops (idempotent by bundle id); refused ops are quarantined and listed."""
        body: bytes = request.state.body
        try:
            parsed = PushRequest.model_validate_json(body)
            ops = [(Op.from_row(o.op), o.sig) for o in parsed.ops]
        except (ValidationError, ValueError, KeyError, TypeError) as exc:
            raise HubRefused(400, f"malformed push: {str(exc).splitlines()[0][:200]}") from exc
        key = request.headers.get("idempotency-key")
        if key is not None and key != parsed.bundle_id:
            raise HubRefused(400, "Idempotency-Key differs from the bundle id")
        answer = _hub(request).push(device, parsed.bundle_id, hashlib.sha256(body).hexdigest(), ops)
        return PushAnswerModel(**answer.__dict__)

    @router.get("/pull")
    def pull(
        request: Request,
        device: Device,
        cursor: Annotated[str, Query(max_length=20)] = "0",
        limit: Annotated[str, Query(max_length=6)] = "5000",
    ) -> PullAnswer:
        """A page of ops with hub_seq > cursor, in commit order; ``more`` while pages remain."""
        if not cursor.isdigit() or not limit.isdigit():
            raise HubRefused(400, f"cursor {cursor[:20]!r} and limit {limit[:6]!r} must be whole numbers")
        page = _hub(request).pull(int(cursor), int(limit))
        return PullAnswer.model_validate(page)

    @router.get("/snapshot")
    def snapshot(request: Request, device: Device) -> Response:
        """Projection rows, field stamps and the hub_seq they correspond to, for a new tablet."""
        return Response(json.dumps(_hub(request).snapshot()), media_type="application/json")

    return router
