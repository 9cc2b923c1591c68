"""The office register: server-rendered pages (Jinja2, no JavaScript) behind an office login.

Without a live session every page redirects to ``/login`` (with the page asked for, to return to it)
and shows no data. Forms that change something (revoke, reinstate, enrol, log out) carry a token tied to
the session, and the cookie is HttpOnly and SameSite=Strict. Revoking or reinstating a device asks first,
on a page naming the device, and the audit log records which office user did it. A name that fails to log
in LOGIN_FAILURES times within LOGIN_WINDOW_MS is refused for the rest of that window. Every page answers
with a content security policy that allows no script and no framing, and is not cached.
"""

from __future__ import annotations

import base64
import hashlib
import hmac
import json
import secrets
import time
from pathlib import Path
from typing import Annotated, Any
from urllib.parse import parse_qs, quote

from cryptography.exceptions import InvalidTag
from cryptography.hazmat.primitives.ciphers.aead import AESGCM
from fastapi import APIRouter, Depends, FastAPI, Request, Response
from fastapi.responses import HTMLResponse, JSONResponse, RedirectResponse
from jinja2 import Environment, FileSystemLoader, select_autoescape
from starlette.exceptions import HTTPException as StarletteHTTPException

from office import registry
from office.hubstore import HubStore
from reports.words import SHORT_PRIORITY, priority_label, status_label

COOKIE = "bw_session"
NEW_CODE_COOKIE, NEW_CODE_SECONDS = "bw_new_code", 300  # a code just made, sealed, on its way to the page showing it
MAX_FORM_FIELDS = 10  # the largest register form has four
PAGE_HEADERS = {
    # server-rendered pages with inline styles and data-URI images only: no script runs, nothing frames them
    "Content-Security-Policy": "default-src 'none'; img-src 'self' data:; style-src 'unsafe-inline'; "
    "form-action 'self'; frame-ancestors 'none'; base-uri 'none'",
    "X-Content-Type-Options": "nosniff",
    "Referrer-Policy": "same-origin",
    "Cache-Control": "no-store",  # a shared office machine's back button shows no page after log out
}
TEMPLATES = Environment(
    loader=FileSystemLoader(Path(__file__).parent / "templates"), autoescape=select_autoescape(["html"])
)


class LoginRequired(Exception):
    """No live office session: answer with a redirect to the login page."""


class FormRefused(Exception):
    """A form the register cannot read (more fields than any of its forms has)."""


def _hub(request: Request) -> HubStore:
    hub: HubStore = request.app.state.hub
    return hub


def office_user(request: Request) -> str:
    """The logged-in office user, or LoginRequired."""
    token = request.cookies.get(COOKIE, "")
    user = registry.session_user(_hub(request), token)
    if user is None:
        raise LoginRequired()
    return user


User = Annotated[str, Depends(office_user)]


def _csrf(request: Request) -> str:
    return hmac.new(
        _hub(request).bundle_key.encode(), request.cookies.get(COOKIE, "").encode(), hashlib.sha256
    ).hexdigest()


def _page(request: Request, template: str, user: str | None, **context: Any) -> HTMLResponse:
    html = TEMPLATES.get_template(template).render(
        user=user,
        csrf=_csrf(request) if user else "",
        fmt_ms=_fmt_ms,
        priority_words=priority_label,  # the notice's and the app's words and shapes, never a raw code
        short_priority=lambda p: SHORT_PRIORITY.get(p, p),
        status_words=status_label,  # the tablet's shape and word for a recheck status ('● OK')
        **context,
    )
    return HTMLResponse(html)


def _fmt_ms(ms: int | None) -> str:
    return time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime(ms / 1000)) if ms else "never"


async def _form(request: Request) -> dict[str, str]:
    body = (await request.body()).decode("utf-8", "replace")
    try:
        fields = parse_qs(body, max_num_fields=MAX_FORM_FIELDS)
    except ValueError as exc:
        raise FormRefused(str(exc)) from exc
    return {k: v[0] for k, v in fields.items()}


def _token_ok(request: Request, form: dict[str, str]) -> bool:
    """Whether the form carries this session's token (forms posted from another site do not)."""
    return hmac.compare_digest(form.get("csrf", ""), _csrf(request))


def _expired() -> Response:
    return Response("form expired; open the page again", status_code=403)


def _local_path(target: str) -> str:
    """``target`` if it is a path on this hub ('/site/x'), else '/': a login never sends anyone elsewhere."""
    ok = target.startswith("/") and not target.startswith(("//", "/\\")) and "\\" not in target
    return target if ok and all(c.isprintable() and c != " " for c in target) else "/"


def install(app: FastAPI) -> None:
    """Add the register pages and the login redirect to ``app``."""

    @app.exception_handler(LoginRequired)
    async def to_login(request: Request, exc: LoginRequired) -> Response:
        path = request.url.path + (f"?{request.url.query}" if request.url.query else "")
        where = "/login" if path == "/" or request.method != "GET" else f"/login?next={quote(path, safe='')}"
        return RedirectResponse(where, status_code=303)

    @app.exception_handler(FormRefused)
    async def bad_form(request: Request, exc: FormRefused) -> Response:
        page = _page(
            request,
            "missing.html",
            None,
            heading="Form not accepted",
            what="The form sent was not one "
            "of this register's forms (too many fields). Open the page again and use its form.",
        )
        page.status_code = 400
        return page

    @app.exception_handler(StarletteHTTPException)
    async def http_error(request: Request, exc: StarletteHTTPException) -> Response:
        if request.url.path.startswith("/v1/"):  # the tablets' protocol answers in JSON
            return JSONResponse({"detail": exc.detail}, status_code=exc.status_code, headers=exc.headers)
        what = (
            "There is no page at this address."
            if exc.status_code == 404
            else "This address is for a form's button, not a page to open. Use the menu above."
            if exc.status_code == 405
            else str(exc.detail)
        )
        heading = "Not found" if exc.status_code == 404 else "Not a page"
        page = _page(request, "missing.html", None, heading=heading, what=what)
        page.status_code = exc.status_code
        return page

    @app.middleware("http")
    async def page_headers(request: Request, call_next: Any) -> Response:
        response: Response = await call_next(request)
        if not request.url.path.startswith("/v1/"):
            response.headers.update(PAGE_HEADERS)
        return response

    app.include_router(_router())


def _router() -> APIRouter:
    router = APIRouter(tags=["register"], include_in_schema=False)
    for add in (_session_routes, _site_routes, _notice_routes, _device_routes, _code_routes, _device_action_routes):
        add(router)
    return router


def _session_routes(router: APIRouter) -> None:
    """Log in and out."""

    @router.get("/login")
    def login_form(request: Request, next: str = "/") -> HTMLResponse:
        return _page(request, "login.html", None, error="", next=_local_path(next))

    @router.post("/login")
    async def login(request: Request) -> Response:
        form = await _form(request)
        target = _local_path(form.get("next", "/"))
        try:
            token = registry.login(_hub(request), form.get("name", ""), form.get("password", ""))
        except registry.LoginLocked as exc:
            page = _page(request, "login.html", None, error=str(exc), next=target)
            page.status_code = 429
            return page
        if token is None:
            page = _page(request, "login.html", None, error="Name or password not recognised.", next=target)
            page.status_code = 401
            return page
        response = RedirectResponse(target, status_code=303)
        response.set_cookie(COOKIE, token, httponly=True, samesite="strict", secure=request.url.scheme == "https")
        return response

    @router.get("/logout")
    def logout_page(request: Request, user: User) -> Response:
        return RedirectResponse("/", status_code=303)  # log out is the menu's button (a form with the token)

    @router.post("/logout")
    async def logout(request: Request, user: User) -> Response:
        if not _token_ok(request, await _form(request)):
            return _expired()
        registry.logout(_hub(request), request.cookies.get(COOKIE, ""))
        response = RedirectResponse("/login", status_code=303)
        response.delete_cookie(COOKIE)
        return response


def _site_routes(router: APIRouter) -> None:
    """Sites, one site, one deficiency (with the recheck run again here), photos."""

    @router.get("/")
    def sites(request: Request, user: User) -> HTMLResponse:
        return _page(request, "sites.html", user, sites=registry.sites(_hub(request)), priorities=_priorities())

    @router.get("/site/{site_id}")
    def site(site_id: str, request: Request, user: User) -> HTMLResponse:
        hub = _hub(request)
        record = registry.site(hub, site_id)
        if record is None:
            return _not_found(request, user, f"No site {site_id}")
        open_items = registry.items(hub, site_id)
        return _page(
            request,
            "site.html",
            user,
            site=record,
            items=open_items,
            beams=registry.site_beams(hub, site_id, open_items),
            closed=registry.items(hub, site_id, open_only=False, closed_only=True),
            notices=registry.notices(hub, site_id),
        )

    @router.get("/deficiency/{deficiency_id}")
    def deficiency(deficiency_id: str, request: Request, user: User) -> HTMLResponse:
        hub = _hub(request)
        found = registry.deficiency(hub, deficiency_id)
        if found is None:
            return _not_found(request, user, f"No deficiency {deficiency_id}")
        return _page(request, "deficiency.html", user, site=registry.site(hub, found["item"].site_id), **found)

    @router.get("/beam/{beam_id}/sheet.pdf")
    def beam_sheet(beam_id: str, request: Request, user: User) -> Response:
        found = registry.recheck_sheet(_hub(request), beam_id)
        if isinstance(found, str):
            return Response(found, status_code=404, media_type="text/plain")
        name, data = found
        return Response(
            data, media_type="application/pdf", headers={"Content-Disposition": f'attachment; filename="{name}"'}
        )

    @router.get("/photo/{sha256}")
    def photo(sha256: str, request: Request, user: User) -> Response:
        content = _hub(request).read_blob(sha256) if registry.SHA_RE.match(sha256) else None
        if content is None:
            return Response("photo not yet received", status_code=404)
        return Response(content, media_type="image/jpeg")


def _notice_routes(router: APIRouter) -> None:
    """Issued notices with their hash check, and the PDF download."""

    @router.get("/notices")
    def notices(request: Request, user: User) -> HTMLResponse:
        return _page(request, "notices.html", user, notices=registry.notices(_hub(request)))

    @router.get("/notice/{notice_id}.pdf")
    def notice_pdf(notice_id: str, request: Request, user: User) -> Response:
        found = registry.notice_pdf(_hub(request), notice_id)
        if found is None:
            return Response("no such notice, or its PDF does not match its recorded hash", status_code=404)
        name, data = found
        return Response(
            data, media_type="application/pdf", headers={"Content-Disposition": f'attachment; filename="{name}"'}
        )


def _device_routes(router: APIRouter) -> None:
    """Devices: last sync, quarantine, revoke, and enrolment codes with their QR image."""

    @router.get("/devices")
    def devices(request: Request, user: User) -> HTMLResponse:
        return _devices_page(request, user)

    @router.post("/devices/enroll")
    async def enroll(request: Request, user: User) -> Response:
        """Make a code, then send the browser to the page that shows it (post, redirect, get).

        The code travels to that page sealed in a short-lived cookie only this session can open; the page
        shows it once and drops the cookie, so a refresh or the back button never makes another code.
        """
        form = await _form(request)
        if not _token_ok(request, form):
            return _expired()
        name, person, role = form.get("name", "").strip(), form.get("person", "").strip(), form.get("role", "")
        try:
            code = registry.make_code(_hub(request), name, person, role, by=user)
        except ValueError as exc:
            page = _devices_page(request, user, enrol_error=f"No code made: {exc}")
            page.status_code = 422
            return page
        response = RedirectResponse("/devices/code", status_code=303)
        sealed = _seal(request, json.dumps({"name": name, "person": person, "role": role, "code": code}))
        response.set_cookie(
            NEW_CODE_COOKIE,
            sealed,
            max_age=NEW_CODE_SECONDS,
            path="/devices/code",
            httponly=True,
            samesite="strict",
            secure=request.url.scheme == "https",
        )
        return response

    @router.get("/devices/code")
    def new_code(request: Request, user: User) -> HTMLResponse:
        """The code just made, shown once; opened again (a refresh), the page says so and shows no code."""
        shown = _unseal(request, request.cookies.get(NEW_CODE_COOKIE, ""))
        new = json.loads(shown) if shown else None
        if new and registry.is_outstanding(_hub(request), new["code"]):
            page = _devices_page(request, user, new_code=new | {"qr": registry.enrolment_qr_data_uri(new["code"])})
        else:
            page = _devices_page(request, user, code_gone=True)
        page.delete_cookie(NEW_CODE_COOKIE, path="/devices/code", httponly=True, samesite="strict")
        return page


def _device_action_routes(router: APIRouter) -> None:
    """Revoke and reinstate a device: a page that asks first, then the form's post."""

    @router.get("/devices/{device_id}/{action}")
    def confirm(device_id: str, action: str, request: Request, user: User) -> HTMLResponse:
        """Ask before revoking or reinstating, naming the device and what follows."""
        if action not in DEVICE_ACTIONS:
            return _not_found(request, user, "There is no page at this address.")
        try:
            device = _hub(request).device(device_id)
        except KeyError:
            return _not_found(request, user, f"No device {device_id}")
        pending = registry.device_quarantine_count(_hub(request), device_id)
        return _page(request, "device_confirm.html", user, action=action, d=device, held=pending)

    @router.post("/devices/{device_id}/{action}")
    async def device_action(device_id: str, action: str, request: Request, user: User) -> Response:
        if action not in DEVICE_ACTIONS:
            return _not_found(request, user, "There is no page at this address.")
        if not _token_ok(request, await _form(request)):
            return _expired()
        hub = _hub(request)
        try:
            hub.revoke(device_id, by=user) if action == "revoke" else hub.reinstate(device_id, by=user)
        except KeyError:
            return _not_found(request, user, f"No device {device_id}")
        return RedirectResponse("/devices", status_code=303)


DEVICE_ACTIONS = ("revoke", "reinstate")


def _code_routes(router: APIRouter) -> None:
    """Withdraw an enrolment code not yet used: a page that asks first, then the form's post."""

    @router.get("/devices/codes/{code_id}/withdraw")
    def confirm_withdraw(code_id: str, request: Request, user: User) -> HTMLResponse:
        found = registry.outstanding_code(_hub(request), code_id)
        if found is None:
            return _not_found(request, user, "No such enrolment code outstanding: used, expired or withdrawn.")
        return _page(request, "code_confirm.html", user, c=found)

    @router.post("/devices/codes/{code_id}/withdraw")
    async def withdraw(code_id: str, request: Request, user: User) -> Response:
        if not _token_ok(request, await _form(request)):
            return _expired()
        try:
            registry.withdraw_code(_hub(request), code_id, by=user)
        except KeyError:
            return _not_found(request, user, "No such enrolment code outstanding: used, expired or withdrawn.")
        return RedirectResponse("/devices#codes", status_code=303)


def _seal_key(request: Request) -> bytes:
    """A key for this session's new-code cookie: the hub's secret and the session token (HMAC-SHA256)."""
    session = request.cookies.get(COOKIE, "").encode()
    return hmac.new(_hub(request).bundle_key.encode(), b"new enrolment code\0" + session, hashlib.sha256).digest()


def _seal(request: Request, text: str) -> str:
    """``text`` encrypted and authenticated (AES-GCM) for this session alone, as cookie-safe base64."""
    nonce = secrets.token_bytes(12)
    return base64.urlsafe_b64encode(nonce + AESGCM(_seal_key(request)).encrypt(nonce, text.encode(), None)).decode()


def _unseal(request: Request, sealed: str) -> str | None:
    """What ``_seal`` sealed, or None for a cookie of another session, altered, or not there."""
    try:
        raw = base64.urlsafe_b64decode(sealed.encode())
        return AESGCM(_seal_key(request)).decrypt(raw[:12], raw[12:], None).decode()
    except (ValueError, InvalidTag):
        return None


def _devices_page(request: Request, user: str, **extra: Any) -> HTMLResponse:
    hub = _hub(request)
    context = {"new_code": None, "enrol_error": "", "code_gone": False} | extra
    address = f"{request.url.scheme}://{request.url.netloc}"  # as this browser reached the hub
    return _page(
        request,
        "devices.html",
        user,
        devices=hub.devices(),
        codes=registry.outstanding_codes(hub),
        quarantine=registry.held(hub),
        hub_address=address,
        **context,
    )


def _priorities() -> list[str]:
    from core.results import PRIORITY_ORDER

    return list(PRIORITY_ORDER)


def _not_found(request: Request, user: str, what: str) -> HTMLResponse:
    page = _page(request, "missing.html", user, heading="Not found", what=what)
    page.status_code = 404
    return page
