"""The office register pages: nothing without a login; sites, one item, notices with a hash check, devices."""

import hashlib

import httpx
import pytest

from mobile.hub_client import sync
from mobile.issue import acknowledge, issue_notice_for_site, rows_for_items
from office import registry
from tests.core.beams import glulam


def _jpeg() -> bytes:
    import io

    from PIL import Image

    buf = io.BytesIO()
    Image.new("RGB", (64, 48), (150, 110, 60)).save(buf, "JPEG")
    return buf.getvalue()


PHOTO = _jpeg()
PAGES = ["/", "/site/x", "/deficiency/x", "/notices", "/devices", "/notice/x.pdf", "/photo/" + "a" * 64]


@pytest.fixture
def office(served, tmp_path):
    tablet = served.tablet(tmp_path / "t.db", "Tablet 3", "R. Eng", "reviewer")
    site = tablet.create_site(name="Maple Street Hall", address="12 Maple St")
    beam = tablet.save_beam(site.id, glulam(mark="R2-B4"))
    d = tablet.raise_deficiency(
        site.id,
        beam,
        "bearing_restraint_missing",
        "immediate",
        "Grid C / 4",
        "No lateral restraint at the east bearing",
        "CSA O86-19 cl. 7.5.6.4",
        "Install blocking before loading",
        due="2020-01-31",
    )
    tablet.add_photo(site.id, PHOTO, beam_id=beam, deficiency_id=d.id)
    tablet.move_status(d.id, "corrected", "Site super", "contractor", note="blocking installed")
    ack = acknowledge(tablet, rows_for_items(tablet, site.id), "R. Eng")  # the beam rests on memory rows
    notice, _ = issue_notice_for_site(tablet, site.id, tmp_path / "n.pdf", issued_by="R. Eng", acknowledgement=ack)
    assert sync(tablet).in_step
    registry.add_user(served.hub, "office", "correct horse battery")
    client = httpx.Client(base_url=served.url, follow_redirects=False, timeout=20)
    yield served, client, site, d, notice, tablet
    client.close()


def test_every_page_redirects_to_login_without_a_session(office):
    _served, client, site, d, notice, _ = office
    for page in [*PAGES, f"/site/{site.id}", f"/deficiency/{d.id}", f"/notice/{notice.id}.pdf"]:
        r = client.get(page)
        assert r.status_code == 303, page
        assert r.headers["location"] == "/login", page
        assert d.description.encode() not in r.content
        assert b"%PDF" not in r.content
    client.cookies.set("bw_session", "forged-token")
    assert client.get("/").status_code == 303


def test_wrong_password_is_refused(office):
    _, client, *_ = office
    r = client.post("/login", data={"name": "office", "password": "wrong password"})
    assert r.status_code == 401
    assert "bw_session" not in r.cookies


def _login(client):
    r = client.post("/login", data={"name": "office", "password": "correct horse battery"})
    assert r.status_code == 303
    client.cookies.set("bw_session", r.cookies["bw_session"])


def test_register_shows_sites_items_history_notices_and_devices(office):
    _served, client, site, d, notice, _tablet = office
    _login(client)
    home = client.get("/").text
    assert "Maple Street Hall" in home
    assert "overdue" in home.lower()
    page = client.get(f"/site/{site.id}").text
    assert d.number in page
    assert "immediate" in page
    assert "overdue" in page
    item = client.get(f"/deficiency/{d.id}").text
    assert "blocking installed" in item
    assert "corrected" in item
    assert "R2-B4" in item
    assert notice.number in item
    assert "/photo/" in item
    photo_sha = hashlib.sha256(PHOTO).hexdigest()
    assert client.get(f"/photo/{photo_sha}").content == PHOTO
    notices = client.get("/notices").text
    assert "matches its recorded SHA-256" in notices
    pdf = client.get(f"/notice/{notice.id}.pdf")
    assert pdf.status_code == 200
    assert hashlib.sha256(pdf.content).hexdigest() == notice.pdf_sha256
    devices = client.get("/devices").text
    assert "Tablet 3" in devices
    assert "R. Eng" in devices
    assert "active" in devices


def test_a_changed_pdf_is_flagged_and_not_served(office):
    served, client, _site, _d, notice, _ = office
    _login(client)
    hub = served.hub
    if hub.backend == "sqlite":
        hub.blob_path(notice.pdf_sha256).write_bytes(b"%PDF-1.4 altered")
    else:
        with hub.tx():
            hub.db.execute(
                "UPDATE hub_blob_data SET content=? WHERE sha256=?", [b"%PDF-1.4 altered", notice.pdf_sha256]
            )
    assert "DOES NOT match" in client.get("/notices").text
    assert client.get(f"/notice/{notice.id}.pdf").status_code == 404


def test_revoke_from_the_devices_page_needs_the_form_token(office):
    served, client, _site, _d, _notice, tablet = office
    _login(client)
    assert client.post(f"/devices/{tablet.device_id}/revoke", data={"csrf": "guess"}).status_code == 403
    assert served.hub.device(tablet.device_id).revoked_ms is None
    import re

    token = re.search(r'name="csrf" value="([0-9a-f]+)"', client.get("/devices").text).group(1)
    assert client.post(f"/devices/{tablet.device_id}/revoke", data={"csrf": token}).status_code == 303
    assert served.hub.device(tablet.device_id).revoked_ms is not None
    assert "revoked" in client.get("/devices").text


def test_hub_user_add_reads_the_password_from_stdin(served, monkeypatch, capsys):
    import io

    from mobile.cli import main

    monkeypatch.setattr("sys.stdin", io.StringIO("a long enough password\n"))
    assert main(["hub", "user", "add", "--db", served.hub.path, "--name", "clerk"]) == 0
    assert registry.login(served.hub, "clerk", "a long enough password") is not None
    monkeypatch.setattr("sys.stdin", io.StringIO("short\n"))
    assert main(["hub", "user", "add", "--db", served.hub.path, "--name", "clerk2"]) == 2
    assert "at least 8" in capsys.readouterr().err
