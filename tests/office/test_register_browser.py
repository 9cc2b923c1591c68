"""The office register in a real browser (Debian's chromium and chromedriver, driven by selenium).

Logs in, opens a site, opens an item (with the recheck run again on the hub), downloads a notice, makes an
enrolment code with its QR image; screenshots go to test-artefacts/office/.
"""

import hashlib
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
