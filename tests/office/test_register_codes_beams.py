"""The register's enrolment codes (made once, listed, withdrawn), a site's beams, and the tablet's words and shapes.

What an office web register owes its users (common practice): a refresh or the back button never repeats an
action (post, redirect, get); a secret shown once is not shown again; an outstanding credential can be listed
and withdrawn, asked first and audited with who did it; a list of a site's 300 beams opens at once. None is an
engineering figure; the words and shapes are the tablet's own (``reports.words``), checked against it.
"""

import html
import re
import time

import pytest

from mobile.hub_client import HubError, enroll, sync
from office import registry
from reports.words import STAGE_WORDS, STATUS_WORDS, status_label
from storage import Store
from tests.core.beams import glulam
from tests.office.test_register import _login, office  # noqa: F401  (the same synced office, as a fixture)

BEARING = {"lateral": True, "rotation": True, "length_mm": 140}
FORM = {"name": "Tablet 5", "person": "J. Tech", "role": "technician"}


def _token(client, page="/devices"):
    return re.search(r'name="csrf" value="([0-9a-f]+)"', client.get(page).text).group(1)


def _text(page: str) -> str:
    return html.unescape(re.sub(r"\s+", " ", re.sub(r"<style.*?</style>|<[^>]+>", " ", page, flags=re.S)))


def _codes_made(hub) -> int:
    with hub.lock:
        return int(hub.db.execute("SELECT count(*) FROM hub_code").fetchone()[0])


def _shown_code(page: str) -> str | None:
    found = re.search(r'id="enrol-code">([0-9A-F-]+)<', page)
    return found.group(1) if found else None


def test_a_refresh_or_the_back_button_never_makes_a_second_code(office, tmp_path):  # noqa: F811
    served, client, *_ = office
    _login(client)
    before = _codes_made(served.hub)
    made = client.post("/devices/enroll", data=FORM | {"csrf": _token(client)})
    assert made.status_code == 303  # post, redirect, get: the page the browser keeps is a GET
    assert made.headers["location"] == "/devices/code"
    assert "bw_new_code" in made.headers["set-cookie"]
    assert re.search(r"[0-9A-F]{4}-[0-9A-F]{4}", made.headers["set-cookie"]) is None  # sealed, not the code
    first = client.get("/devices/code")
    code = _shown_code(first.text)
    assert code is not None  # shown once, to the user who asked
    assert 'id="enrol-qr"' in first.text
    again = client.get("/devices/code")  # the refresh (or back, then forward)
    assert _shown_code(again.text) is None
    assert "shown once" in _text(again.text)
    assert _codes_made(served.hub) == before + 1  # one code made, however often the page was opened
    answer = enroll(Store(tmp_path / "t5.db"), served.url, code)  # the code shown is the code made
    assert (answer["name"], answer["role"]) == ("Tablet 5", "technician")


def test_the_new_code_cookie_opens_only_for_the_session_that_made_it(office):  # noqa: F811
    served, client, *_ = office
    _login(client)
    made = client.post("/devices/enroll", data=FORM | {"csrf": _token(client)})
    sealed = made.cookies["bw_new_code"]
    registry.add_user(served.hub, "clerk", "another long password")
    import httpx

    with httpx.Client(base_url=served.url, follow_redirects=False, timeout=20) as other:
        r = other.post("/login", data={"name": "clerk", "password": "another long password"})
        other.cookies.set("bw_session", r.cookies["bw_session"])
        other.cookies.set("bw_new_code", sealed, path="/devices/code")
        assert _shown_code(other.get("/devices/code").text) is None  # another session cannot open it
    client.cookies.set("bw_new_code", sealed[:-4] + ("AAAA" if not sealed.endswith("AAAA") else "BBBB"))
    assert _shown_code(client.get("/devices/code").text) is None  # an altered cookie shows nothing


def test_outstanding_codes_are_listed_without_the_code_and_withdrawn_after_asking(office, tmp_path):  # noqa: F811
    served, client, *_ = office
    _login(client)
    client.post("/devices/enroll", data=FORM | {"csrf": _token(client)})
    code = _shown_code(client.get("/devices/code").text)
    served.hub.new_code("Tablet 9", "K. Line", "reviewer")  # made on the hub's command line: no office user
    page = client.get("/devices").text
    listed = _text(re.search(r'<table id="outstanding-codes">.*?</table>', page, flags=re.S).group(0))
    assert "Tablet 5 J. Tech technician office" in listed  # for whom, which role, who made it
    assert "Tablet 9 K. Line reviewer the hub's command line" in listed
    assert code not in page  # the code itself is never shown again (the hub keeps its SHA-256 only)
    assert len(re.findall(r"\d{4}-\d\d-\d\d \d\d:\d\d UTC", listed)) == 4  # made and expires, each
    assert listed.index("Tablet 5") < listed.index("Tablet 9")  # oldest first
    path, code_id = re.findall(r'href="(/devices/codes/([0-9a-f]{16})/withdraw)"', page)[0]  # Tablet 5's
    ask = client.get(path)
    assert ask.status_code == 200
    assert "Withdraw the enrolment code for Tablet 5?" in _text(ask.text)
    assert len(registry.outstanding_codes(served.hub)) == 2  # asking changed nothing
    assert client.post(path, data={"csrf": "guess"}).status_code == 403
    done = client.post(path, data={"csrf": _token(client)})
    assert (done.status_code, done.headers["location"]) == (303, "/devices#codes")
    assert [c.name for c in registry.outstanding_codes(served.hub)] == ["Tablet 9"]
    assert "Tablet 5" not in _text(
        re.search(r'<table id="outstanding-codes">.*?</table>', client.get("/devices").text, flags=re.S).group(0)
    )
    with pytest.raises(HubError, match=r"code was withdrawn at the office on .* by office user office"):
        enroll(Store(tmp_path / "t5.db"), served.url, code)  # not "unknown": the person asks for a new one
    assert registry.code_audit(served.hub, code_id) == [
        ("code made by", "office"),
        ("code withdrawn", "enrolment code for Tablet 5 (J. Tech, technician) withdrawn by office user office"),
    ]
    assert client.post(path, data={"csrf": _token(client)}).status_code == 404  # withdrawn once only
    assert client.get("/devices/codes/zz/withdraw").status_code == 404


def test_a_site_lists_its_beams_with_member_size_span_and_open_items(office):  # noqa: F811
    _served, client, site, d, _notice, tablet = office
    _login(client)
    other = tablet.save_beam(
        site.id, glulam(mark="R2-B5", spans_mm=[6000, 4500], bearings=[BEARING] * 3), {"level": "Roof", "gridline": "D"}
    )
    assert sync(tablet).in_step
    page = client.get(f"/site/{site.id}").text
    table = re.search(r'<table id="beams">.*?</table>', page, flags=re.S).group(0)
    rows = [_text(r) for r in re.findall(r"<tr>.*?</tr>", table, flags=re.S)[1:]]
    assert len(rows) == 2
    assert f"R2-B4 - - glulam D.Fir-L 24f-E 130 × 456 mm 7200 mm {d.number} ▲ IMMEDIATE Recheck sheet (PDF)" in rows[0]
    assert "R2-B5 Roof D glulam D.Fir-L 24f-E 130 × 456 mm 6000 + 4500 mm None Recheck sheet (PDF)" in rows[1]
    assert f'href="/deficiency/{d.id}"' in table
    assert f'href="/beam/{other}/sheet.pdf"' in table


class _Counting:
    """The hub's database with its statements counted (the register's reads go through ``execute``)."""

    def __init__(self, db):
        self.db, self.count = db, 0

    def execute(self, *args, **kwargs):
        self.count += 1
        return self.db.execute(*args, **kwargs)

    def __getattr__(self, name):
        return getattr(self.db, name)


def _site_page_reads(served, client, site_id) -> tuple[int, float]:
    counting = _Counting(served.hub.db)
    served.hub.db = counting
    try:
        start = time.perf_counter()
        page = client.get(f"/site/{site_id}")
        took = time.perf_counter() - start
    finally:
        served.hub.db = counting.db
    assert page.status_code == 200
    return counting.count, took


def test_a_300_beam_site_page_reads_the_beams_at_once(office):  # noqa: F811
    served, client, site, _d, _notice, tablet = office
    _login(client)
    one_beam, _ = _site_page_reads(served, client, site.id)
    for n in range(299):
        tablet.save_beam(site.id, glulam(mark=f"B-{n:03d}"), {"level": f"L{n % 3}", "gridline": f"G{n % 20}"})
    assert sync(tablet).in_step
    reads, took = _site_page_reads(served, client, site.id)
    assert reads == one_beam  # no read a beam: one read of the site's beams, whatever their number
    assert took < 2.0, f"the 300-beam site page took {took:.2f} s"
    assert client.get(f"/site/{site.id}").text.count("/sheet.pdf") == 300


def test_statuses_read_in_the_tablets_words_and_shapes(office):  # noqa: F811
    from core.recheck import recheck
    from mobile.viewmodels import common

    _served, client, site, d, _notice, tablet = office
    _login(client)
    assert common.STATUS_WORDS is STATUS_WORDS  # one mapping, the tablet's and the register's
    assert common.STAGE_WORDS is STAGE_WORDS
    item = _text(client.get(f"/deficiency/{d.id}").text)
    expected = status_label(recheck(tablet.beam(d.beam_id)).status.value)  # as the tablet's beam form shows it
    assert f"Status {expected}" in item
    assert "Status Corrected (contractor reports done)" in item
    site_page = _text(client.get(f"/site/{site.id}").text)
    assert "Corrected (contractor reports done)" in site_page
    assert not re.search(r"\b(ok|deficient|not permitted|not established)\b", item)  # never the stored value
