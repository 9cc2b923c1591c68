"""The office register in a real browser (Debian's chromium and chromedriver, driven by selenium).

Logs in, opens a site, opens an item (with the recheck run again on the hub), downloads a notice, makes an
enrolment code with its QR image; opens the item of a beam whose support lifts and reads its uplift row;
screenshots go to test-artefacts/office/.
"""

import hashlib
import re
import shutil
import time
from pathlib import Path

import pytest

from tests.office.test_register import office  # noqa: F401  (the same synced office, as a fixture)

ARTEFACTS = Path(__file__).resolve().parents[2] / "test-artefacts" / "office"
CHROMIUM = shutil.which("chromium")
DRIVER = shutil.which("chromedriver")


@pytest.fixture
def browser(tmp_path):
    if not (CHROMIUM and DRIVER):
        pytest.skip("chromium and chromium-driver are not installed (scripts/setup.sh installs them)")
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for arg in ("--headless=new", "--no-sandbox", "--disable-dev-shm-usage", "--window-size=1200,900"):
        options.add_argument(arg)
    downloads = tmp_path / "downloads"  # apart from the notice the fixture writes, so only the download counts
    downloads.mkdir()
    options.add_experimental_option(
        "prefs", {"download.default_directory": str(downloads), "download.prompt_for_download": False}
    )
    driver = webdriver.Chrome(service=Service(executable_path=DRIVER), options=options)
    driver.download_dir = downloads
    yield driver
    driver.quit()


def _wait_for(driver, text):
    """Wait (bounded, 15 s) until the page that a click opened shows ``text``."""
    from selenium.webdriver.support.ui import WebDriverWait

    WebDriverWait(driver, 15).until(lambda d: text in d.page_source)
    return True


def _shot(driver, name):
    ARTEFACTS.mkdir(parents=True, exist_ok=True)
    driver.save_screenshot(str(ARTEFACTS / f"{name}.png"))


@pytest.mark.parametrize("hub", ["sqlite"], indirect=True)  # the pages are the same on both backends
def test_log_in_open_a_site_and_an_item_download_a_notice(office, browser):  # noqa: F811
    from selenium.webdriver.common.by import By

    served_hub, _, _site, d, notice, _ = office
    url = served_hub.url
    browser.get(url + "/")
    assert browser.current_url.endswith("/login")  # no data without a session
    _shot(browser, "1-login")
    browser.find_element(By.NAME, "name").send_keys("office")
    browser.find_element(By.NAME, "password").send_keys("correct horse battery")
    browser.find_element(By.ID, "login").click()
    assert _wait_for(browser, "Maple Street Hall")
    _shot(browser, "2-sites")
    browser.find_element(By.LINK_TEXT, "Maple Street Hall").click()
    assert _wait_for(browser, d.number)
    _shot(browser, "3-site")
    beams = browser.find_element(By.ID, "beams")
    browser.execute_script("arguments[0].scrollIntoView();", beams)
    assert "R2-B4" in beams.text
    assert f"{d.number} ▲ IMMEDIATE" in beams.text
    assert "Corrected (contractor reports done)" in browser.find_element(By.ID, "open-items").text
    _shot(browser, "3b-site-beams")
    browser.find_element(By.LINK_TEXT, d.number).click()
    assert _wait_for(browser, "blocking installed")
    _shot(browser, "4-item")
    recheck = browser.find_element(By.ID, "recheck")
    browser.execute_script("arguments[0].scrollIntoView();", recheck)
    assert "Governing check" in recheck.text
    assert "bending, span 1 (positive moment)" in recheck.text
    # the trace as the sheet prints it (CSA O86-19 7.5.6.4.3 writes CB with a radical and b squared)
    checks = browser.find_element(By.ID, "recheck-checks")
    browser.execute_script("arguments[0].scrollIntoView();", checks)
    shown = checks.text  # what is on screen: the governing check's trace is open
    assert "CB = √(Le d / b²)" in shown
    assert "sqrt(" not in shown
    assert "b^2" not in shown
    _shot(browser, "4b-item-recheck")
    # the same item once its beam lost a bearing restraint (CSA O86-19 7.5.6.3.1): no governing number
    from mobile.hub_client import sync

    tablet = office[5]
    loose = {"lateral": False, "rotation": True, "length_mm": 140}
    tablet.update_beam(d.beam_id, {"bearings": [loose, loose]})
    assert sync(tablet).in_step
    browser.refresh()
    assert _wait_for(browser, "taken as failing")
    recheck = browser.find_element(By.ID, "recheck")
    browser.execute_script("arguments[0].scrollIntoView();", recheck)
    assert "capacity not established or not permitted (taken as failing)" in recheck.text
    _shot(browser, "4c-item-not-established")
    browser.find_element(By.LINK_TEXT, "Notices").click()
    assert _wait_for(browser, "matches its recorded SHA-256")
    _shot(browser, "5-notices")
    browser.find_element(By.LINK_TEXT, "Download PDF").click()
    pdfs = []
    for _ in range(100):  # bounded: 10 s for the download to finish
        pdfs = list(browser.download_dir.glob("*.pdf"))
        if pdfs:
            break
        time.sleep(0.1)
    assert len(pdfs) == 1
    assert hashlib.sha256(pdfs[0].read_bytes()).hexdigest() == notice.pdf_sha256
    browser.find_element(By.LINK_TEXT, "Devices").click()
    assert _wait_for(browser, "Tablet 3")
    _shot(browser, "6-devices")
    browser.find_element(By.ID, "enrol-name").send_keys("Tablet 8")
    browser.find_element(By.ID, "enrol-person").send_keys("J. Tech")
    browser.find_element(By.ID, "enrol-make").click()
    assert _wait_for(browser, "One-time code for")
    qr = browser.find_element(By.ID, "enrol-qr")
    browser.execute_script("arguments[0].scrollIntoView();", qr)
    assert browser.execute_script("return arguments[0].complete && arguments[0].naturalWidth", qr) > 0  # drawn
    _shot(browser, "7-enrol-qr")
    assert browser.current_url.endswith("/devices/code")  # a page got, not a form posted
    code = browser.find_element(By.ID, "enrol-code").text
    browser.refresh()  # no second code, and this one is not shown again
    assert _wait_for(browser, "shown once")
    assert not browser.find_elements(By.ID, "enrol-code")
    assert code not in browser.page_source
    listed = browser.find_element(By.ID, "outstanding-codes")
    assert "Tablet 8" in listed.text
    assert "J. Tech" in listed.text
    browser.execute_script("arguments[0].scrollIntoView();", listed)
    _shot(browser, "7b-codes-outstanding")
    browser.find_element(By.LINK_TEXT, "Withdraw…").click()
    assert _wait_for(browser, "Withdraw the enrolment code for Tablet 8?")
    _shot(browser, "7c-code-withdraw-asks")
    browser.find_element(By.ID, "confirm-withdraw").click()
    assert _wait_for(browser, "Enrolment codes not yet used (0)")


def _check_rows(driver):
    """The rows of the page's check table as a reader sees them: (cell texts, the row's class, the row)."""
    from selenium.webdriver.common.by import By

    table = driver.find_element(By.ID, "recheck-checks")
    return [
        ([td.text for td in r.find_elements(By.TAG_NAME, "td")], r.get_attribute("class"), r)
        for r in table.find_elements(By.XPATH, "./tbody/tr[td[5]]")  # a trace row has one cell
    ]


@pytest.mark.parametrize("hub", ["sqlite"], indirect=True)  # the pages are the same on both backends
def test_a_support_that_lifts_shows_its_uplift_row_with_no_hold_down_taken(office, browser):  # noqa: F811
    """A glulam beam with a long right overhang under snow: the page shows support 1's uplift as a reader sees it.

    Expected values from statics, not from the app: for a simple span L with a right overhang a, the left
    reaction under w_s on the span and w_o on the overhang is R1 = w_s L / 2 - w_o a^2 / (2 L) (beam tables:
    simple beam under uniform load plus beam overhanging one support with uniform load on the overhang,
    e.g. AISC Steel Construction Manual Table 3-23, cited from memory; the same as moments about support 2;
    moments about support 1 give R2 = w (L + a)^2 / (2 L) under w everywhere). Loads: NBC 2020
    Table 4.1.3.2-A with snow as the principal load, 1.25D + 1.5S where the loads lift support 1 (the
    overhang) and 0.9D where dead load counteracts (the span); specified loads D + S without factors.
    Dead load includes the self-weight at 4.9 kN/m3 for glulam (common practice, from memory). The page
    prints kN to 0.1, so a value within 0.05 kN of statics is the same number.
    """
    from selenium.webdriver.common.by import By

    from mobile.hub_client import sync
    from tests.core.beams import glulam

    served_hub, _, site, _d, _notice, tablet = office
    span_m, overhang_m, dead_typed, snow = 6.0, 2.8, 0.5, 9.0  # m, m, kN/m, kN/m: a roof beam as reviewed
    beam = tablet.save_beam(
        site.id,
        glulam(
            mark="R3-B7",
            spans_mm=[span_m * 1000],
            overhang_right_mm=overhang_m * 1000,
            loads={"dead_kn_m": dead_typed, "live_kn_m": 0, "snow_kn_m": snow},
            top_edge={"braced_by": "decking", "fastened": True},
        ),
    )
    lifts = tablet.raise_deficiency(
        site.id,
        beam,
        "uplift_at_support",
        "immediate",
        "Grid F / 2",
        "Overhang under snow lifts the west bearing; no hold-down seen",
        "NBC 4.1.3.2",
        "Engineer of record to specify a hold-down",
    )
    assert sync(tablet).in_step
    dead = dead_typed + 4.9 * 0.130 * 0.456  # kN/m, typed dead load + self-weight of 130 x 456 mm glulam
    r1_factored = 0.9 * dead * span_m / 2 - (1.25 * dead + 1.5 * snow) * overhang_m**2 / (2 * span_m)
    r1_specified = dead * span_m / 2 - (dead + snow) * overhang_m**2 / (2 * span_m)
    assert r1_factored < 0  # statics: support 1 is pulled up (-7.3 kN) ...
    assert r1_specified < 0  # ... and still is under specified loads (-4.0 kN)

    browser.set_window_size(1280, 800)  # a tablet held landscape: the page itself gets 1280 x 800
    chrome = browser.execute_script("return window.outerHeight - window.innerHeight")
    browser.set_window_size(1280, 800 + chrome)
    browser.get(served_hub.url + "/")
    browser.find_element(By.NAME, "name").send_keys("office")
    browser.find_element(By.NAME, "password").send_keys("correct horse battery")
    browser.find_element(By.ID, "login").click()
    assert _wait_for(browser, "Maple Street Hall")
    browser.find_element(By.LINK_TEXT, "Maple Street Hall").click()
    assert _wait_for(browser, lifts.number)
    browser.find_element(By.LINK_TEXT, lifts.number).click()
    assert _wait_for(browser, "R3-B7")
    assert browser.execute_script("return [window.innerWidth, window.innerHeight]") == [1280, 800]
    _shot(browser, "8-uplift-item")
    rows = _check_rows(browser)
    names = [cells[0] for cells, _, _ in rows]
    assert names.count("uplift, support 1") == 1
    at = names.index("uplift, support 1")
    assert names[at - 1] == "bearing, support 1"  # right after its own bearing
    assert "uplift, support 2" not in names  # support 2 carries the overhang: pressed down
    (_, demand, capacity, verdict, clause), _, row = rows[at]
    browser.execute_script("arguments[0].scrollIntoView({block: 'center'});", row)
    assert row.is_displayed()
    _shot(browser, "8b-uplift-row")  # before the numbers are asserted, so a failing run leaves it to look at
    shown = re.fullmatch(r"factored uplift (\d+\.\d) kN \((.+)\); specified (\d+\.\d) kN", demand)
    assert shown, demand
    assert float(shown[1]) == pytest.approx(-r1_factored, abs=0.05)
    assert float(shown[3]) == pytest.approx(-r1_specified, abs=0.05)
    case = shown[2]  # the load case, as the recheck names it: snow principal, 0.9D on the span
    assert case.startswith("1.25D + 1.5S")
    assert "0.9D on span 1" in case
    assert "1.25D and L/S on overhang right" in case
    assert capacity.startswith("hold-down not recorded: not checked.")
    assert "the engineer of record must check the hold-down" in capacity
    assert verdict == "needs a hold-down now: snow can lift it at any time"  # in words, not by colour alone
    assert clause.startswith("NBC 4.1.3.2")
    # the uplift row has no utilisation, so it never governs: the governing line and the highlighted row
    # name the largest utilisation shown: support 2's bearing, whose Qf is R2 under 1.25D + 1.5S everywhere
    rated = {cells[0]: float(cells[3].split()[0]) for cells, _, _ in rows if re.match(r"\d+\.\d\d", cells[3])}
    top = max(rated, key=rated.get)
    assert top == "bearing, support 2"
    r2 = (1.25 * dead + 1.5 * snow) * (span_m + overhang_m) ** 2 / (2 * span_m)
    qf = rows[names.index(top)][0][1]
    assert float(re.fullmatch(r"Qf (\d+\.\d) kN", qf)[1]) == pytest.approx(r2, abs=0.05)
    governing = browser.find_element(By.XPATH, "//table[@id='recheck']//tr[th='Governing check']/td").text
    assert governing == f"{top}, utilisation {rated[top]:.2f}"
    assert [cells[0] for cells, css, _ in rows if css == "governing"] == [top]


@pytest.mark.parametrize("hub", ["sqlite"], indirect=True)  # the pages are the same on both backends
def test_the_site_names_its_engineer_of_record_and_a_back_dated_notice_is_flagged(office, browser, monkeypatch):  # noqa: F811
    """The site's parties beside its address, and a notice dated before its item was raised flagged in words.

    The notice is written as a tablet whose date check was skipped would write it (the hub keeps what devices
    sign; the register flags it). Its item was raised today, so a notice dated 2026-11-28 is before it anywhere.
    """
    from selenium.webdriver.common.by import By

    from mobile.hub_client import sync
    from storage import Store

    served_hub, _, site, d, _notice, tablet = office
    tablet.update_site(
        site.id,
        {"owner": "City of Riverton", "contractor": "Brookside Builders", "contractor_contact": "M. Osei"},
    )
    with monkeypatch.context() as m:
        m.setattr(Store, "_check_issue_date", lambda *_: None)
        tablet.issue_notice(site.id, "N-BACK", b"%PDF-1.4 back-dated\n", [d.id], "R. Eng", "2026-11-28")
    assert sync(tablet).in_step
    browser.get(served_hub.url + f"/site/{site.id}")
    browser.find_element(By.NAME, "name").send_keys("office")
    browser.find_element(By.NAME, "password").send_keys("correct horse battery")
    browser.find_element(By.ID, "login").click()
    assert _wait_for(browser, "Engineer of record")
    parties = browser.find_element(By.ID, "site-parties").text
    assert "Owner City of Riverton" in parties
    assert "Contractor Brookside Builders (attention M. Osei)" in parties
    assert "Engineer of record not recorded" in parties
    _shot(browser, "9-site-parties")
    flag = browser.find_element(By.CSS_SELECTOR, "#site-notices tr.date-flag")
    browser.execute_script("arguments[0].scrollIntoView({block: 'center'});", flag)
    assert flag.text.startswith(f"⚠ Check the date of N-BACK: dated 2026-11-28, before its item {d.number} was raised")
    assert flag.text.endswith("UTC by its clock: ask the reviewer")
    _shot(browser, "9b-site-notice-flag")
    browser.find_element(By.LINK_TEXT, "Notices").click()
    assert _wait_for(browser, "Check the date of N-BACK")
    assert len(browser.find_elements(By.CSS_SELECTOR, "tr.date-flag")) == 1  # the notice issued in time is not
    _shot(browser, "9c-notices-flag")
    browser.get(served_hub.url + f"/deficiency/{d.id}")
    assert _wait_for(browser, "Check the date of N-BACK")
    member = browser.find_element(By.XPATH, "//tr[th='Member']/td").text
    assert member == "glulam D.Fir-L 24f-E, 130 × 456 mm"
    flag = browser.find_element(By.CSS_SELECTOR, "p.date-flag")
    browser.execute_script("arguments[0].scrollIntoView({block: 'center'});", flag)
    _shot(browser, "9d-item-notice-flag")
