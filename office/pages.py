"""The office register: server-rendered pages (Jinja2, no JavaScript) behind an office login.

Without a live session every page redirects to ``/login`` and shows no data. Forms that change
something (revoke) carry a token tied to the session, and the cookie is HttpOnly and SameSite=Strict.
"""

from __future__ import annotations

import hashlib
import hmac
import time
from pathlib import Path
from typing import Annotated, Any
from urllib.parse import parse_qs

from fastapi import APIRouter, Depends, FastAPI, Request, Response
from fastapi.responses import HTMLResponse, RedirectResponse
from jinja2 import Environment, FileSystemLoader, select_autoescape

from office import registry
from office.hubstore import HubStore
from reports.render import SHORT_PRIORITY, priority_label

COOKIE = "bw_session"
TEMPLATES = Environment(
    loader=FileSystemLoader(Path(__file__).parent / "templates"), autoescape=select_autoescape(["html"])
)


class LoginRequired(Exception):
    """No live office session: answer with a redirect to the login page."""


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
        **context,
    )
    return HTMLResponse(html)


def _fmt_ms(ms: int | None) -> str:
    return time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime(ms / 1000)) if ms else "never"


async def _form(request: Request) -> dict[str, str]:
    body = (await request.body()).decode("utf-8", "replace")
    return {k: v[0] for k, v in parse_qs(body, max_num_fields=10).items()}


def install(app: FastAPI) -> None:
    """Add the register pages and the login redirect to ``app``."""

    @app.exception_handler(LoginRequired)
    async def to_login(request: Request, exc: LoginRequired) -> Response:
        return RedirectResponse("/login", status_code=303)

    app.include_router(_router())


def _router() -> APIRouter:
    router = APIRouter(tags=["register"], include_in_schema=False)
    for add in (_session_routes, _site_routes, _notice_routes, _device_routes):
        add(router)
    return router


def _session_routes(router: APIRouter) -> None:
    """Log in and out."""

    @router.get("/login")
    def login_form(request: Request) -> HTMLResponse:
        return _page(request, "login.html", None, error="")

    @router.post("/login")
    async def login(request: Request) -> Response:
        form = await _form(request)
        token = registry.login(_hub(request), form.get("name", ""), form.get("password", ""))
        if token is None:
            page = _page(request, "login.html", None, error="Name or password not recognised.")
            page.status_code = 401
            return page
        response = RedirectResponse("/", status_code=303)
        response.set_cookie(COOKIE, token, httponly=True, samesite="strict", secure=request.url.scheme == "https")
        return response

    @router.post("/logout")
    def logout(request: Request, user: User) -> Response:
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
        return _page(request, "site.html", user, site=record, items=registry.items(hub, site_id))

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
        content = _hub(request).read_blob(sha256) if len(sha256) == 64 else None
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
        form = await _form(request)
        if not hmac.compare_digest(form.get("csrf", ""), _csrf(request)):
            return Response("form expired; open the devices page again", status_code=403)
        name, person, role = form.get("name", "").strip(), form.get("person", "").strip(), form.get("role", "")
        try:
            code = _hub(request).new_code(name, person, role)
        except ValueError as exc:
            page = _devices_page(request, user, enrol_error=f"No code made: {exc}")
            page.status_code = 422
            return page
        new = {"name": name, "person": person, "role": role, "code": code, "qr": registry.enrolment_qr_data_uri(code)}
        return _devices_page(request, user, new_code=new)

    @router.post("/devices/{device_id}/revoke")
    async def revoke(device_id: str, request: Request, user: User) -> Response:
        form = await _form(request)
        if not hmac.compare_digest(form.get("csrf", ""), _csrf(request)):
            return Response("form expired; open the devices page again", status_code=403)
        hub = _hub(request)
        try:
            hub.revoke(device_id)
        except KeyError:
            return _not_found(request, user, f"No device {device_id}")
        return RedirectResponse("/devices", status_code=303)


def _devices_page(request: Request, user: str, **extra: Any) -> HTMLResponse:
    hub = _hub(request)
    context = {"new_code": None, "enrol_error": ""} | extra
    return _page(request, "devices.html", user, devices=hub.devices(), quarantine=hub.quarantine(), **context)


def _priorities() -> list[str]:
    from core.results import PRIORITY_ORDER

    return list(PRIORITY_ORDER)


def _not_found(request: Request, user: str, what: str) -> HTMLResponse:
    page = _page(request, "missing.html", user, what=what)
    page.status_code = 404
    return page
