"""The office register pages: nothing without a login; sites, one item, notices with a hash check, devices."""

import hashlib
import re
from urllib.parse import quote

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
PAGES = [
    "/",
    "/site/x",
    "/deficiency/x",
    "/notices",
    "/devices",
    "/notice/x.pdf",
    "/photo/" + "a" * 64,
    "/beam/x/sheet.pdf",
]


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
    for page in [
        *PAGES,
        f"/site/{site.id}",
        f"/deficiency/{d.id}",
        f"/notice/{notice.id}.pdf",
        f"/beam/{d.beam_id}/sheet.pdf",
    ]:
        r = client.get(page)
        assert r.status_code == 303, page
        # to the login, which returns to the page asked for once logged in
        assert r.headers["location"] in ("/login", f"/login?next={quote(page, safe='')}"), page
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
    assert "▲ IMMEDIATE" in page  # priorities in the notice's words and shapes, never a raw code
    assert "overdue" in page
    assert "▲ IMMEDIATE" in home
    assert "before_loading" not in re.sub(r"<style.*?</style>|<[^>]+>", "", home, flags=re.S)  # the words shown
    item = client.get(f"/deficiency/{d.id}").text
    assert "▲ IMMEDIATE: make safe now" in item
    assert "blocking installed" in item
    assert "Corrected (contractor reports done)" in item  # the tablet's words for the stage (reports.words)
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
    assert f'href="/devices/{tablet.device_id}/revoke"' in client.get("/devices").text  # a page that asks first
    assert served.hub.device(tablet.device_id).revoked_ms is None
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


def test_devices_page_makes_a_one_time_code_with_its_qr_to_scan(office, tmp_path):
    import html
    import re

    import segno

    from mobile.hub_client import enroll
    from storage import Store

    served, client, *_ = office
    _login(client)
    form = {"name": "Tablet 5", "person": "J. Tech", "role": "technician"}
    assert client.post("/devices/enroll", data=form | {"csrf": "guess"}).status_code == 403
    token = re.search(r'name="csrf" value="([0-9a-f]+)"', client.get("/devices").text).group(1)
    bad = client.post("/devices/enroll", data=form | {"csrf": token, "role": "boss"})
    assert bad.status_code == 422
    assert "No code made: role 'boss'" in html.unescape(bad.text)
    made = client.post("/devices/enroll", data=form | {"csrf": token})
    assert (made.status_code, made.headers["location"]) == (303, "/devices/code")  # post, redirect, get
    page = client.get("/devices/code")  # the browser follows with the sealed cookie it was given
    assert page.status_code == 200
    code = re.search(r'id="enrol-code">([0-9A-F-]+)<', page.text).group(1)
    src = html.unescape(re.search(r'id="enrol-qr"[^>]*src="([^"]+)"', page.text).group(1))
    assert src.startswith("data:image/svg+xml")
    # the image is the symbol of this code (the library's own writer for the code), not of another
    assert src == segno.make(code, error="m", micro=False, boost_error=False).svg_data_uri(scale=8, border=4)
    assert src != segno.make(code.replace("-", "+"), error="m", micro=False).svg_data_uri(scale=8, border=4)
    # the code works once, for the name, person and role typed on the page
    answer = enroll(Store(tmp_path / "t5.db"), served.url, code)
    assert (answer["name"], answer["person"], answer["role"]) == ("Tablet 5", "J. Tech", "technician")


def test_deficiency_page_reruns_the_recheck_from_the_beam_record_and_the_site_basis(office):
    """The page's recheck, checked by hand.

    Simple span, NBC 2020 Table 4.1.3.2-A combination 2 (1.25D + 1.5S), Mf = wL^2/8 (handbook simple-span
    moment); dead load includes the beam's self-weight at 4.9 kN/m3 for glulam (common practice, from memory).
    """
    import html
    import re

    from mobile.hub_client import sync

    _served, client, _site, d, _notice, tablet = office
    _login(client)
    self_weight = 4.9 * 0.130 * 0.456  # kN/m, 130 x 456 mm glulam
    page = html.unescape(client.get(f"/deficiency/{d.id}").text)
    assert "Recheck run again here" in page
    assert "line loads as typed on the tablet" in page
    # typed loads: D 2.0, S 5.0 kN/m on 7.2 m: w = 1.25 x (2.0 + sw) + 1.5 x 5.0 = 10.36 kN/m; Mf = w 7.2^2 / 8
    assert f"Mf {(1.25 * (2.0 + self_weight) + 1.5 * 5.0) * 7.2**2 / 8:.1f} kN·m" in page  # 67.2
    assert "Governing check" in page
    assert "where the numbers come from" in page
    assert re.search(r"\[(verified|confirmed|memory|formula)\]\s+CSA O86", page)  # the trace lines, with clauses
    # a tributary width on record: the loads come from the site's design basis as it stands now
    tablet.update_site(d.site_id, {"design_basis": {"dead_kpa": 1.0, "live_kpa": 0.0, "snow_kpa": 2.0}})
    tablet.update_beam(d.beam_id, {"tributary_m": 3.0})
    assert sync(tablet).in_step
    page = html.unescape(client.get(f"/deficiency/{d.id}").text)
    assert "derived from the site's design basis: dead 1, live 0, snow 2 kPa x tributary width 3 m" in page
    # w = 1.25 x (1.0 x 3.0 + sw) + 1.5 x (2.0 x 3.0) = 13.11 kN/m; Mf = w 7.2^2 / 8 = 85.0 kN·m
    assert f"Mf {(1.25 * (1.0 * 3.0 + self_weight) + 1.5 * (2.0 * 3.0)) * 7.2**2 / 8:.1f} kN·m" in page
    rows = re.findall(r"<tr[^>]*>\s*<td>([^<]+)</td>\s*<td>[^<]*</td>\s*<td>[^<]*</td>\s*<td>([0-9.]+)", page)
    top = max(rows, key=lambda r: float(r[1]))
    assert f"Governing check</th><td>{top[0]}, utilisation {float(top[1]):.2f}" in page  # the largest one governs


def test_deficiency_page_traces_are_typeset_as_on_the_recheck_sheet(office):
    """The page's trace cells print units and formulas as the sheet does (reports.content.typeset).

    CSA O86-19 7.5.6.4.3 writes the slenderness ratio CB = sqrt(Le d / b^2) with a radical and a square, and
    areas in mm² (SI as written in the standard); the page printed the recheck's ASCII forms (sqrt(, b^2, mm2, x).
    """
    import html

    _served, client, _site, d, _notice, _tablet = office
    _login(client)
    page = client.get(f"/deficiency/{d.id}").text
    traces = [html.unescape(t) for t in re.findall(r'<pre class="trace">(.*?)</pre>', page, re.S)]
    assert len(traces) >= 4  # bending, shear, two bearings, deflection
    text = "\n".join(traces)
    assert "√(Le d / b²)" in text  # CB, CSA O86-19 7.5.6.4.3
    assert "mm²" in text  # bearing area
    assert "4.9 kN/m³ × b × d" in text  # glulam self-weight (common practice, from memory)
    for ascii_form in ("mm2", "m3", "b^2", "sqrt(", " x "):
        assert ascii_form not in text, ascii_form


def test_deficiency_page_links_the_beams_recheck_sheet_run_again_here(office):
    """The sheet's recheck is the page's: the same Mf (wL^2/8, handbook simple-span moment), from the same loads."""
    import html
    import io
    import re

    from pypdf import PdfReader

    _served, client, site, d, _notice, tablet = office
    _login(client)
    tablet.update_site(d.site_id, {"design_basis": {"dead_kpa": 1.0, "live_kpa": 0.0, "snow_kpa": 2.0}})
    tablet.update_beam(d.beam_id, {"tributary_m": 3.0})
    assert sync(tablet).in_step
    page = html.unescape(client.get(f"/deficiency/{d.id}").text)
    assert f'href="/beam/{d.beam_id}/sheet.pdf"' in page
    r = client.get(f"/beam/{d.beam_id}/sheet.pdf")
    assert r.status_code == 200
    assert r.headers["content-type"] == "application/pdf"
    assert 'filename="recheck-R2-B4.pdf"' in r.headers["content-disposition"]
    text = re.sub(r"\s+", " ", "\n".join(p.extract_text() for p in PdfReader(io.BytesIO(r.content)).pages))
    assert "Recheck sheet: R2-B4" in text
    assert site.name in text
    assert re.search(r"Rechecked \d{4}-\d\d-\d\d on the office hub with bracewalk \d", text)
    assert "Line loads derived from the site's design basis" in text
    # w = 1.25 x (1.0 x 3.0 + self-weight) + 1.5 x (2.0 x 3.0) kN/m (NBC 2020 Table 4.1.3.2-A case 2); 4.9 kN/m3
    w = 1.25 * (1.0 * 3.0 + 4.9 * 0.130 * 0.456) + 1.5 * (2.0 * 3.0)
    mf = f"Mf {w * 7.2**2 / 8:.1f} kN·m"
    assert mf in text
    assert mf in page
    assert "engineer of record" in text
    # what the recheck covers, on the sheet and on every register page (gravity line loads only)
    assert "wind, earthquake, point loads and connections are not checked" in text
    assert "wind, earthquake, point loads and connections are not checked" in re.sub(r"\s+", " ", page)
    missing = client.get("/beam/no-such-beam/sheet.pdf")
    assert missing.status_code == 404
    assert b"%PDF" not in missing.content


def test_deficiency_page_gives_no_governing_number_when_the_capacity_is_not_established(office):
    """A bearing without lateral restraint (CSA O86-19 7.5.6.3.1, d/b > 2.5): bending capacity not established.

    The page named the largest rated check (shear, well under 1) as governing, a reassuring number for a
    member whose capacity is unknown; the unrated bending region governs, with no number.
    """
    import html
    import re

    from mobile.hub_client import sync

    _served, client, _site, d, _notice, tablet = office
    _login(client)
    loose = {"lateral": False, "rotation": True, "length_mm": 140}
    tablet.update_beam(d.beam_id, {"bearings": [loose, loose]})
    assert sync(tablet).in_step
    page = html.unescape(client.get(f"/deficiency/{d.id}").text)
    assert "not established" in page
    assert "Governing check</th><td>bending" in page
    assert "capacity not established or not permitted (taken as failing)" in page
    findings = re.sub(r"<[^>]+>", "", page[page.index("Findings of this recheck") :])
    assert "▲ IMMEDIATE: make safe now, support 1 (left end):" in findings  # words, not codes
    assert "bearing_restraint_missing" not in findings


def test_deficiency_page_says_when_the_beam_record_cannot_be_rechecked(office):
    import html

    from mobile.hub_client import sync

    _served, client, _site, d, _notice, tablet = office
    _login(client)
    # a second span added on the tablet, its new support's restraints not yet entered (as the form saves it)
    beam = tablet.beam_record(d.beam_id)
    draft = {"lateral": None, "rotation": None, "length_mm": None}
    tablet.update_beam(d.beam_id, {"spans_mm": beam["spans_mm"] * 2, "bearings": [*beam["bearings"], draft]})
    assert sync(tablet).in_step  # a draft is what a local save writes: the hub takes it
    page = html.unescape(client.get(f"/deficiency/{d.id}").text)
    assert "the beam record is incomplete or refused (bearings" in page
    assert "not rechecked" in page


def test_register_checks_give_a_lifting_bearing_its_uplift_row():
    """A bearing that lifts gets the sheet's uplift row on the register page too (no hold-down recorded).

    6 m span with a 2.8 m overhang: with 0.9D on the span and 1.25D + 1.5S on the overhang, statics gives
    R1 = w_span L / 2 - w_overhang a^2 / (2 L) < 0 (any beam handbook), so support 1 must be held down.
    """
    from core.recheck import recheck
    from office.registry import _checks
    from tests.core.beams import glulam

    beam = glulam(
        spans_mm=[6000],
        overhang_right_mm=2800,
        loads={"dead_kn_m": 0.5, "live_kn_m": 0, "snow_kn_m": 9.0},
        top_edge={"braced_by": "decking", "fastened": True},
    )
    result = recheck(beam)
    dead = 0.5 + 4.9 * 0.130 * 0.456  # glulam self-weight 4.9 kN/m3 (from memory)
    r1 = 0.9 * dead * 6.0 / 2 - (1.25 * dead + 1.5 * 9.0) * 2.8**2 / (2 * 6.0)
    assert r1 < 0
    rows = _checks(result)
    names = [r["name"] for r in rows]
    uplift = rows[names.index("bearing, support 1") + 1]
    assert uplift["name"] == "uplift, support 1"
    assert uplift["demand"].startswith(f"factored uplift {-r1:.1f} kN")
    assert "hold-down not recorded: not checked" in uplift["capacity"]
    assert uplift["words"] == "needs a hold-down now: snow can lift it at any time"  # snow: common practice
    specified = dead * 6.0 / 2 - (dead + 9.0) * 2.8**2 / (2 * 6.0)  # D + S on the overhang, no load factor
    assert uplift["demand"].endswith(f"; specified {-specified:.1f} kN")
    assert uplift["utilisation"] is None
    assert "uplift, support 2" not in names  # support 2 carries the overhang: it is pressed down
    # the uplift row is not a rated check: the governing check is counted among the checks alone (the page
    # named "uplift, support 1" with support 2's bearing utilisation, the row after it, when it was not)
    page = registry.recheck_now(beam.model_dump(mode="json"), {})
    assert page["governing"] == "bearing, support 2"
    assert page["utilisation"] == next(r["utilisation"] for r in rows if r["name"] == "bearing, support 2")
