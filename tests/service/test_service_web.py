"""The web page driven in headless Chromium (Debian's chromium + chromium-driver, via Selenium).

Upload a case, see the verdict, the warnings and the caution, download the
memo; paste a broken case and see each problem next to the editor with its
line marked; screen a register and see its rows.  Skipped only outside CI
when no Chromium is installed (``.ci/run`` installs it).
"""
from __future__ import annotations

import os
import shutil
import time
from pathlib import Path

import pytest

from service_helpers import DEMO, Server, register_csv

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
CHROMEDRIVER = shutil.which("chromedriver") or "/usr/bin/chromedriver"

if not (Path(CHROMIUM).exists() and Path(CHROMEDRIVER).exists()):
    if os.environ.get("CI"):
        raise RuntimeError("CI needs chromium and chromium-driver (.ci/run installs them)")
    pytest.skip("no Chromium here (apt-get install chromium chromium-driver)", allow_module_level=True)

webdriver = pytest.importorskip("selenium.webdriver")
from selenium.webdriver.chrome.service import Service as DriverService  # noqa: E402
from selenium.webdriver.common.by import By  # noqa: E402
from selenium.webdriver.support import expected_conditions as EC  # noqa: E402
from selenium.webdriver.support.ui import WebDriverWait  # noqa: E402

CAUTION_WORDS = "Screening estimate only"


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    s = Server(tmp_path_factory.mktemp("web"), env={"HEATSCREEN_WORKERS": "1"}, name="web")
    s.start()
    yield s
    s.stop()


@pytest.fixture(scope="module")
def downloads(tmp_path_factory):
    return tmp_path_factory.mktemp("downloads")


@pytest.fixture(scope="module")
def browser(tmp_path_factory, downloads):
    opts = webdriver.ChromeOptions()
    opts.binary_location = CHROMIUM
    for arg in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-dev-shm-usage",
                "--window-size=1400,1000", f"--user-data-dir={tmp_path_factory.mktemp('chrome-profile')}"):
        opts.add_argument(arg)
    opts.add_experimental_option("prefs", {"download.default_directory": str(downloads),
                                           "download.prompt_for_download": False,
                                           "plugins.always_open_pdf_externally": True})
    driver = webdriver.Chrome(service=DriverService(executable_path=CHROMEDRIVER), options=opts)
    driver.set_page_load_timeout(60)
    driver.execute_cdp_cmd("Page.setDownloadBehavior", {"behavior": "allow", "downloadPath": str(downloads)})
    yield driver
    driver.quit()


def _wait(driver, locator, timeout=60):
    return WebDriverWait(driver, timeout).until(EC.presence_of_element_located(locator))


def _downloaded(folder: Path, suffix: str, timeout: float = 30) -> Path:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        done = [p for p in folder.iterdir() if p.suffix == suffix]
        if done and not any(p.name.endswith(".crdownload") for p in folder.iterdir()):
            return done[0]
        time.sleep(0.1)
    raise AssertionError(f"no {suffix} file downloaded into {folder}: {list(folder.iterdir())}")


def test_upload_a_case_see_verdict_and_download_memo(server, browser, downloads, tmp_path_factory):
    browser.get(server.url + "/")
    assert CAUTION_WORDS in browser.find_element(By.CSS_SELECTOR, ".caution").text
    browser.find_element(By.ID, "case_file").send_keys(str(DEMO / "fw-v110-solvent-receiver.yaml"))
    browser.find_element(By.ID, "screen").click()
    verdict = _wait(browser, (By.ID, "verdict"))
    assert verdict.text.startswith("Verdict: ")
    assert verdict.text.split(": ")[1] in ("PASS", "REVIEW", "FAIL")
    assert "/ui/runs/" in browser.current_url
    assert CAUTION_WORDS in browser.find_element(By.CSS_SELECTOR, ".caution").text
    warnings = browser.find_element(By.ID, "warnings")
    assert warnings.text.startswith("Warnings (")
    items = browser.find_elements(By.CSS_SELECTOR, "ul.warnings li")
    assert len(items) == int(warnings.text.split("(")[1].split(")")[0])
    assert all(li.is_displayed() for li in items)
    assert browser.find_element(By.ID, "limits").is_displayed()
    shots = tmp_path_factory.mktemp("screens")
    browser.save_screenshot(str(shots / "result.png"))
    browser.find_element(By.ID, "memo-link").click()
    pdf = _downloaded(downloads, ".pdf")
    assert pdf.read_bytes().startswith(b"%PDF")


def test_pasted_case_with_problems_shows_them_next_to_the_editor(server, browser):
    browser.get(server.url + "/?demo=fw-t204-hold-tank")
    area = browser.find_element(By.ID, "case_text")
    text = area.get_attribute("value")
    assert "FW-T204" in text
    broken = text.replace("mass: {value: 9000 kg", "mass: {value: 9000", 1)
    assert broken != text
    lineno = next(i for i, line in enumerate(broken.splitlines(), 1) if "value: 9000," in line)
    area.clear()
    browser.execute_script("arguments[0].value = arguments[1];", area, broken)  # typing is slow; set it whole
    browser.find_element(By.ID, "screen").click()
    problems = _wait(browser, (By.CSS_SELECTOR, "ul.problems li"))
    items = browser.find_elements(By.CSS_SELECTOR, "ul.problems li")
    fields = [li.get_attribute("data-field") for li in items]
    assert "contents.mass" in fields, fields
    item = items[fields.index("contents.mass")]
    assert f"line {lineno}" in item.text
    assert "unit" in item.text
    marked = browser.find_elements(By.CSS_SELECTOR, "pre.listing span.bad")
    assert [m.get_attribute("id") for m in marked] == [f"L{lineno}"]
    # the editor keeps the text so it can be corrected, and sits beside the problem list
    assert browser.find_element(By.ID, "case_text").get_attribute("value") == broken
    editor = browser.find_element(By.ID, "case_text").rect
    assert problems.rect["x"] > editor["x"] + editor["width"] - 5
    assert CAUTION_WORDS in browser.find_element(By.CSS_SELECTOR, ".caution").text


def test_register_upload_shows_rows_and_downloads(server, browser, tmp_path_factory):
    folder = tmp_path_factory.mktemp("register")
    reg = folder / "register.csv"
    reg.write_bytes(register_csv([{"id": "WEB-1", "contents.mass": "9000 kg"},
                                  {"id": "WEB-2", "contents.mass": "no unit"}]))
    browser.get(server.url + "/ui/register")
    browser.find_element(By.ID, "register").send_keys(str(reg))
    browser.find_element(By.ID, "base").send_keys(str(DEMO / "fw-t204-hold-tank.yaml"))
    browser.find_element(By.ID, "submit-register").click()
    deadline = time.monotonic() + 90
    while True:
        state = _wait(browser, (By.ID, "job-state")).text
        if state not in ("queued", "running"):
            break
        assert time.monotonic() < deadline
        time.sleep(0.5)
        browser.refresh()
    assert state == "done"
    rows = browser.find_element(By.ID, "job-rows").text
    assert "WEB-1" in rows
    assert "WEB-2" in browser.find_element(By.ID, "job-errors").text
    names = [a.text for a in browser.find_elements(By.CSS_SELECTOR, "#job-files a")]
    assert {"results.json", "results.csv", "errors.csv", "summary.pdf"} <= set(names)
    assert CAUTION_WORDS in browser.find_element(By.CSS_SELECTOR, ".caution").text
