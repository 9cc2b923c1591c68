"""The register as an office uses it: asked-first device actions, held changes, signers, notices, log-in limits.

Revoke and reinstate asked first and audited, held changes in words, who signed a status move, notices by
site with the hash the paper prints, log-in limits and safe errors. These check what the register promises
its users (common practice for an office web register: confirm an action that cannot be taken back, say who
did it, keep a log-in from being guessed at, answer a wrong address with a page, not a stack trace); none of
them is an engineering figure.
"""

import re

import httpx
import pytest

from mobile.hub_client import HubError, sync
from office import registry
from reports.stamp import embedded_hash, short_form
from tests.core.beams import glulam
from tests.office.test_register import _login, office  # noqa: F401  (the same synced office, as a fixture)

pytestmark = pytest.mark.parametrize("hub", ["sqlite"], indirect=True)  # the pages are the same on both backends


def _token(client, page="/devices"):
    return re.search(r'name="csrf" value="([0-9a-f]+)"', client.get(page).text).group(1)


def _text(page: str) -> str:
    return re.sub(r"\s+", " ", re.sub(r"<style.*?</style>|<[^>]+>", " ", page, flags=re.S))


def test_revoke_asks_first_names_the_office_user_and_a_revocation_in_error_can_be_undone(office):  # noqa: F811
    served, client, _site, _d, _notice, tablet = office
    _login(client)
    ask = client.get(f"/devices/{tablet.device_id}/revoke")
    assert ask.status_code == 200
    words = _text(ask.text)
    assert "Revoke Tablet 3?" in words
    assert "R. Eng" in words
    assert "stays on the tablet and does not reach the office while it is revoked" in words
    assert served.hub.device(tablet.device_id).revoked_ms is None  # asking changed nothing
    assert client.post(f"/devices/{tablet.device_id}/revoke", data={"csrf": _token(client)}).status_code == 303
    assert served.hub.device(tablet.device_id).revoked_ms is not None
    # the tablet saves while revoked: refused at the office, kept on the tablet
    tablet.create_site(name="Saved while revoked", address="4 Elm St")
    with pytest.raises(HubError, match="revoked"):
        sync(tablet)
    assert "Reinstate…" in client.get("/devices").text
    assert "sync again" in _text(client.get(f"/devices/{tablet.device_id}/reinstate").text)
    assert client.post(f"/devices/{tablet.device_id}/reinstate", data={"csrf": _token(client)}).status_code == 303
    assert served.hub.device(tablet.device_id).revoked_ms is None
    assert sync(tablet).in_step  # what it saved while revoked reaches the office
    assert served.hub.digest() == tablet.digest()
    events = served.hub.audit(tablet.device_id)
    done = [(e, d) for _, e, d in events if e in ("revoked", "reinstated")]
    assert done == [
        ("revoked", "device revoked by office user office"),
        ("reinstated", "device reinstated by office user office"),
    ]


def test_a_held_change_reads_in_words_on_the_devices_page_and_on_its_item(office, tmp_path):  # noqa: F811
    served, client, site, d, _notice, _tablet = office
    tech = served.tablet(tmp_path / "tech.db", "Tablet 7", "S. Tech", "technician")
    assert sync(tech).in_step  # it holds the item now
    tech.move_status(d.id, "verified", "S. Tech", "reviewer", note="looks fine")  # not a reviewer's device
    result = sync(tech)
    assert result.rejected
    _login(client)
    page = _text(client.get("/devices").text)
    assert f"status of {d.number} moved to verified by reviewer" in page  # the tablet's words (reports.words)
    assert "Tablet 7 (S. Tech)" in page
    assert "only a reviewer verifies a deficiency" in page
    assert "not_reviewer" not in page  # the rule's code stays internal
    item = _text(client.get(f"/deficiency/{d.id}").text)
    assert "Changes to this item held at the office (1)" in item
    assert "Status Corrected (contractor reports done)" in item  # the held move is not part of the record
    assert "None verified yet." in _text(client.get(f"/site/{site.id}").text)


def test_item_history_names_the_device_that_signed_each_status_move(office):  # noqa: F811
    _served, client, _site, d, _notice, _tablet = office
    _login(client)
    item = _text(client.get(f"/deficiency/{d.id}").text)
    # the fixture's tablet recorded "corrected" by "Site super (contractor)": typed, and signed by Tablet 3
    assert "Site super (contractor)" in item
    assert "Tablet 3 (R. Eng, enrolled as reviewer)" in item
    assert re.search(r"\d{4}-\d\d-\d\d \d\d:\d\d UTC Corrected \(contractor", item)  # one time format on the page


def test_notices_list_their_site_newest_first_with_the_hash_the_paper_prints(office):  # noqa: F811
    served, client, site, d, notice, _tablet = office
    _login(client)
    pdf = client.get(f"/notice/{notice.id}.pdf").content
    footer = short_form(embedded_hash(pdf))  # the digits printed at the foot of every page (reports/stamp.py)
    page = client.get("/notices").text
    assert f"<code>{footer}</code>" in page
    assert "Maple Street Hall" in _text(page)
    site_page = client.get(f"/site/{site.id}").text
    assert f'href="/notice/{notice.id}.pdf"' in site_page
    assert f'href="/notice/{notice.id}.pdf"' in client.get(f"/deficiency/{d.id}").text
    listed = registry.notices(served.hub)
    assert [n["issued_at"] for n in listed] == sorted((n["issued_at"] for n in listed), reverse=True)


def test_an_immediate_item_is_due_now_and_its_site_comes_first(office):  # noqa: F811
    served, client, _site, _d, _notice, tablet = office
    late = tablet.create_site(name="Aaron Yard", address="1 A St")  # sorts first by name
    beam = tablet.save_beam(late.id, glulam(mark="AY-1"))
    for n in range(3):  # three overdue items, none to be made safe at once
        tablet.raise_deficiency(
            late.id, beam, "note", "before_loading", f"Grid {n}", "Nail missing", "", "Nail", "2020-01-01"
        )
    urgent_site = tablet.create_site(name="Birch Lane", address="2 B St")
    urgent_beam = tablet.save_beam(urgent_site.id, glulam(mark="BL-1"))
    urgent = tablet.raise_deficiency(
        urgent_site.id, urgent_beam, "note", "immediate", "Grid 9", "Post removed", "", "Shore"
    )
    assert sync(tablet).in_step
    _login(client)
    assert "Due now" in _text(client.get(f"/deficiency/{urgent.id}").text)  # it has no date: make safe at once
    names = [s["name"] for s in registry.sites(served.hub)]
    # a site with an item to make safe now comes before one with more overdue items and none such
    assert names.index("Birch Lane") < names.index("Aaron Yard"), names


def test_login_returns_to_the_page_asked_for_and_never_elsewhere(office):  # noqa: F811
    _served, client, site, *_ = office
    r = client.get(f"/site/{site.id}")
    assert r.headers["location"] == f"/login?next=%2Fsite%2F{site.id}"
    form = {"name": "office", "password": "correct horse battery"}
    r = client.post("/login", data=form | {"next": f"/site/{site.id}"})
    assert r.headers["location"] == f"/site/{site.id}"
    for elsewhere in ("https://elsewhere.example/", "//elsewhere.example/", "/\\elsewhere.example", "javascript:x"):
        r = client.post("/login", data=form | {"next": elsewhere})
        assert r.headers["location"] == "/", elsewhere


def test_a_name_that_keeps_failing_is_refused_for_a_while_even_with_the_right_password(office):  # noqa: F811
    served, client, *_ = office
    now = [served.hub.clock_ms()]
    served.hub.clock_ms = lambda: now[0]
    for _ in range(registry.LOGIN_FAILURES):
        assert client.post("/login", data={"name": "office", "password": "wrong guess"}).status_code == 401
    r = client.post("/login", data={"name": "office", "password": "correct horse battery"})
    assert r.status_code == 429
    assert "Too many failed log-ins for this name: try again in 15 min" in r.text
    assert "bw_session" not in r.cookies
    now[0] += registry.LOGIN_WINDOW_MS + 1  # the window has passed
    assert client.post("/login", data={"name": "office", "password": "correct horse battery"}).status_code == 303


def test_log_out_needs_the_page_token(office):  # noqa: F811
    _served, client, *_ = office
    _login(client)
    assert client.post("/logout", data={"csrf": "guess"}).status_code == 403
    assert client.get("/").status_code == 200  # still logged in
    assert client.get("/logout").status_code == 303  # an address typed in logs nobody out
    assert client.post("/logout", data={"csrf": _token(client, "/")}).status_code == 303
    assert client.get("/").status_code == 303


def test_wrong_addresses_and_odd_forms_answer_with_a_page_and_every_page_forbids_script_and_framing(office):  # noqa: F811
    served, client, *_ = office
    _login(client)
    missing = client.get("/no/such/page")
    assert missing.status_code == 404
    assert "There is no page at this address." in missing.text
    assert '{"detail"' not in missing.text
    odd = client.post("/login", data={f"f{i}": "x" for i in range(30)})
    assert odd.status_code == 400
    assert "Form not accepted" in odd.text
    assert client.get("/openapi.json").status_code == 404
    assert client.get("/photo/" + "z" * 64).status_code == 404
    page = client.get("/")
    assert "script-src" not in page.headers["content-security-policy"]  # default-src 'none': no script at all
    assert "default-src 'none'" in page.headers["content-security-policy"]
    assert "frame-ancestors 'none'" in page.headers["content-security-policy"]
    assert page.headers["cache-control"] == "no-store"
    # the tablets' protocol still answers in JSON
    api = httpx.get(served.url + "/v1/no-such-call", timeout=10)
    assert api.status_code == 404
    assert api.json() == {"detail": "Not Found"}
