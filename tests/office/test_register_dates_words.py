"""The register's words for what a person acts on: a refused enrolment code, a site's parties, sizes, notice dates.

What an office register owes its users (common practice, not an engineering figure): a refusal says what happened,
so the person at the tablet asks for a new code rather than re-typing it, and says nothing about any other code; a
site page names who the items refer repairs to (the engineer of record) or says "not recorded"; a size reads as it
was recorded (130 × 456 mm, not 130.0 × 456.0 mm; a real half millimetre kept); a notice dated before an item it
carries was raised by the same tablet's clock (which that tablet refuses to issue:
``storage.store.Store._check_issue_date``) is flagged, never dropped, since the hub keeps what devices sign.
"""

import ast
import calendar
import hashlib
import re
from pathlib import Path

import pytest

from core.records import Stage
from mobile.hub_client import HubError, enroll, sync
from office import registry
from storage import Store
from tests.core.beams import glulam
from tests.office.test_register import _login, office  # noqa: F401  (the same synced office, as a fixture)
from tests.office.test_register_codes_beams import _text

DAY_MS = 24 * 3600 * 1000
OFFICE = Path(registry.__file__).parent


def _ms(y: int, mo: int, d: int, h: int = 0, mi: int = 0) -> int:
    return calendar.timegm((y, mo, d, h, mi, 0)) * 1000


def _code_id(code: str) -> str:
    """How the register names a code it does not show: the first 16 hex digits of its SHA-256 (DEVELOPERS.md)."""
    return hashlib.sha256(code.strip().upper().encode()).hexdigest()[:16]


# -- an enrolment code withdrawn or expired ---------------------------------------------------------
def test_a_withdrawn_code_is_refused_saying_when_and_by_whom_and_nothing_of_other_codes(served, tmp_path):
    hub = served.hub
    now = [_ms(2026, 12, 5, 9, 12)]
    hub.clock_ms = lambda: now[0]
    withdrawn = registry.make_code(hub, "Tablet 5", "J. Tech", "technician", by="office")
    other = registry.make_code(hub, "Tablet 6", "K. Line", "reviewer", by="clerk")  # another code, left alone
    registry.withdraw_code(hub, _code_id(withdrawn), by="office")
    now[0] += 3 * 60_000  # the tablet tries three minutes later
    with pytest.raises(HubError) as refused:
        enroll(Store(tmp_path / "t5.db"), served.url, withdrawn)
    assert refused.value.reason == (  # the tablet's client opens with "the office hub refused: "
        "the office hub refused: this enrolment code was withdrawn at the office on 2026-12-05 09:12 UTC "
        "by office user office: it cannot be used; ask the office for a new code"
    )
    assert refused.value.status == 403
    assert not hub.devices()  # nothing enrolled
    typo = other[:-1] + ("0" if other[-1] != "0" else "1")  # a code never made: unknown, however close to another
    with pytest.raises(HubError) as typed_wrong:
        enroll(Store(tmp_path / "t7.db"), served.url, typo)
    assert typed_wrong.value.reason == "the office hub refused: unknown enrolment code"
    assert enroll(Store(tmp_path / "t6.db"), served.url, other)["name"] == "Tablet 6"  # the other code still works


def test_an_expired_code_is_refused_saying_when_it_expired(served, tmp_path):
    hub = served.hub
    now = [_ms(2026, 12, 4, 8, 30)]
    hub.clock_ms = lambda: now[0]
    code = registry.make_code(hub, "Tablet 5", "J. Tech", "technician", by="office")
    now[0] += DAY_MS + 60_000  # a day and a minute later
    with pytest.raises(HubError) as refused:
        enroll(Store(tmp_path / "t5.db"), served.url, code)
    assert refused.value.reason == (
        "the office hub refused: this enrolment code expired on 2026-12-05 08:30 UTC (codes last 24 hours): "
        "ask the office for a new code"
    )
    assert not hub.devices()


# -- the site's parties -------------------------------------------------------------------------------
def test_the_site_page_names_the_engineer_of_record_beside_owner_and_contractor(office):  # noqa: F811
    _served, client, site, _d, _notice, tablet = office
    _login(client)
    parties = re.search(r'<table id="site-parties".*?</table>', client.get(f"/site/{site.id}").text, flags=re.S)
    assert parties is not None
    assert " ".join(_text(parties.group(0)).split()) == (
        "Owner not recorded Contractor not recorded Engineer of record not recorded"
    )
    tablet.update_site(
        site.id,
        {
            "owner": "City of Riverton",
            "contractor": "Brookside Builders",
            "contractor_contact": "M. Osei",
            "engineer_of_record": "J. Tran, P.Eng., Coastline Engineering",
        },
    )
    assert sync(tablet).in_step
    shown = _text(re.search(r'<table id="site-parties".*?</table>', client.get(f"/site/{site.id}").text, re.S)[0])
    assert " ".join(shown.split()) == (
        "Owner City of Riverton Contractor Brookside Builders (attention M. Osei) "
        "Engineer of record J. Tran, P.Eng., Coastline Engineering"
    )


# -- sizes as recorded ---------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("recorded", "shown"),
    [(130, "130"), (130.0, "130"), (494.5, "494.5"), (494.25, "494.25"), (38.0, "38"), ("235.0", "235")],
)
def test_a_recorded_length_prints_whole_without_point_zero_and_a_fraction_as_recorded(recorded, shown):
    assert registry.mm_words(recorded) == shown


def test_the_item_page_and_the_beam_list_print_one_size_the_same_way(office):  # noqa: F811
    _served, client, site, d, _notice, tablet = office
    _login(client)
    item = _text(client.get(f"/deficiency/{d.id}").text)
    assert "glulam D.Fir-L 24f-E, 130 × 456 mm" in item  # the fixture's beam: whole millimetres
    assert "Spans 7200 mm" in item
    assert "130.0 × 456.0" not in item
    deep = tablet.save_beam(site.id, glulam(mark="R2-B9", d_mm=494.5, spans_mm=[6000.5]))
    half = tablet.raise_deficiency(
        site.id, deep, "bearing_restraint_missing", "observation", "Grid E / 2", "Check", "CSA O86-19", "Check"
    )
    assert sync(tablet).in_step
    item = _text(client.get(f"/deficiency/{half.id}").text)
    assert "glulam D.Fir-L 24f-E, 130 × 494.5 mm" in item
    assert "Spans 6000.5 mm" in item
    beams = _text(re.search(r'<table id="beams">.*?</table>', client.get(f"/site/{site.id}").text, re.S)[0])
    assert "R2-B9 - - glulam D.Fir-L 24f-E 130 × 494.5 mm 6000.5 mm" in beams


# -- the register's stages ------------------------------------------------------------------------------
def test_the_register_takes_its_stages_from_the_record_model():
    by_number = tuple(s.name for s in sorted(Stage, key=lambda s: s.value))
    assert by_number == registry.STAGES
    names = {s.name for s in Stage}
    for source in sorted(OFFICE.glob("*.py")):  # no second list of the stage names in the office package
        for node in ast.walk(ast.parse(source.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Tuple | ast.List | ast.Set):
                texts = {e.value for e in node.elts if isinstance(e, ast.Constant) and isinstance(e.value, str)}
                assert not names <= texts, f"{source.name}:{node.lineno} lists the stage names again"


# -- a notice dated before its items ------------------------------------------------------------------
RAISED_MS = _ms(2026, 11, 30, 14, 5)  # the tablet's clock when it raised the item
PDF = b"%PDF-1.4 a notice as a tablet wrote it\n"


def _tablet(served, path, name, clock):
    store = Store(path, wall_clock_ms=lambda: clock[0])
    enroll(store, served.url, served.hub.new_code(name, "R. Eng", "reviewer"))
    return store


def _issue_unchecked(monkeypatch, store, site_id, number, ids, issued_at):
    """Issue as a tampered or buggy tablet would: its date check skipped, the op signed like any other."""
    with monkeypatch.context() as m:
        m.setattr(Store, "_check_issue_date", lambda *_: None)
        return store.issue_notice(site_id, number, PDF, ids, "R. Eng", issued_at)


def _flags(page: str) -> list[str]:
    return [" ".join(_text(f).split()) for f in re.findall(r'class="date-flag">(.*?)</(?:tr|p)>', page, flags=re.S)]


def test_a_notice_dated_before_its_item_was_raised_on_that_tablet_is_flagged_not_dropped(served, tmp_path, monkeypatch):
    clock = [RAISED_MS]
    tablet = _tablet(served, tmp_path / "a.db", "Tablet A", clock)
    site = tablet.create_site(name="Birch Road School", address="4 Birch Rd")
    d = tablet.raise_deficiency(
        site.id, None, "observation", "before_loading", "Grid B / 3", "Notch at the bearing", "O86", "Repair"
    )
    with pytest.raises(ValueError, match="issued_at 2026-11-28: before"):  # the tablet's own rule refuses it
        tablet.issue_notice(site.id, "N-001", PDF, [d.id], "R. Eng", "2026-11-28")
    clock[0] += 2 * DAY_MS
    fine = tablet.issue_notice(site.id, "N-001", PDF, [d.id], "R. Eng", "2026-12-01")  # after the item: not flagged
    back = _issue_unchecked(monkeypatch, tablet, site.id, "N-002", [d.id], "2026-11-28")
    assert sync(tablet).in_step  # the hub takes the op: nothing stranded
    # another tablet that never wrote the item: its notice is not compared (the tablet's rule is per device)
    other = _tablet(served, tmp_path / "b.db", "Tablet B", [RAISED_MS + 3 * DAY_MS])
    assert sync(other).in_step
    theirs = _issue_unchecked(monkeypatch, other, site.id, "N-003", [d.id], "2026-11-27")
    other.move_status(d.id, "corrected", "Site super", "contractor")  # written after its notice: still not compared
    assert sync(other).in_step

    listed = {n["number"]: n for n in registry.notices(served.hub)}
    assert {n: [f.words for f in listed[n]["date_flags"]] for n in listed} == {
        "N-001": [],
        "N-002": [
            f"dated 2026-11-28, before its item {d.number} was raised on 2026-11-30 14:05 UTC by its clock: "
            "ask the reviewer"
        ],
        "N-003": [],
    }
    assert {fine.id, back.id, theirs.id} == {n["id"] for n in listed.values()}  # all kept

    registry.add_user(served.hub, "office", "correct horse battery")
    import httpx

    with httpx.Client(base_url=served.url, follow_redirects=False, timeout=20) as client:
        _login(client)
        words = f"⚠ Check the date of N-002: {listed['N-002']['date_flags'][0].words}"
        for page in ("/notices", f"/site/{site.id}", f"/deficiency/{d.id}"):
            assert _flags(client.get(page).text) == [words], page


@pytest.mark.parametrize(
    ("issued_at", "written_ms", "before"),
    [
        # a date: before only when earlier than the earliest date anywhere (UTC-12) at the moment written
        ("2026-11-29", _ms(2026, 11, 30, 11, 59), False),  # still 2026-11-29 (23:59) at UTC-12
        ("2026-11-29", _ms(2026, 11, 30, 12, 0), True),  # 2026-11-30 00:00 at UTC-12: 11-30 everywhere
        ("2026-11-29", _ms(2026, 12, 1, 11, 59), True),
        ("2026-11-30", _ms(2026, 11, 30, 23, 59), False),
        # a stored UTC time: before only a whole day or more earlier (no zone puts both on one day)
        ("2026-11-29T14:05:00Z", _ms(2026, 11, 30, 14, 5), True),
        ("2026-11-29T14:06:00Z", _ms(2026, 11, 30, 14, 5), False),
        ("2026-11-30T14:05:00Z", _ms(2026, 11, 30, 14, 5), False),
        ("28/11/2026", _ms(2026, 11, 30), None),  # not a date the tablet writes: flagged as unreadable
    ],
)
def test_a_notice_date_is_before_its_item_only_when_it_is_in_every_time_zone(issued_at, written_ms, before):
    assert registry.dated_before(issued_at, written_ms) is before
