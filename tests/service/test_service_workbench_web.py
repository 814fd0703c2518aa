"""The web page as a workbench, driven in headless Chromium (Debian's chromium + chromium-driver, via Selenium).

The temperature history is an inline SVG in the rendered DOM with its text alternative; "edit and
screen again" keeps the case text in the editor and links the new run to the old; the comparison
shows the changed input and the results that moved.  Accessibility: every control is labelled and
reachable with the Tab key, and text contrast is at least 4.5:1 (WCAG 2.1, success criterion
1.4.3, contrast ratio (L1 + 0.05) / (L2 + 0.05) with the relative luminance of sRGB colours).
Screenshots go to ``HEATSCREEN_SCREENSHOTS`` when it is set (else a temporary folder).
"""
from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

from service_helpers import Server

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
CHROMEDRIVER = shutil.which("chromedriver") or "/usr/bin/chromedriver"

if not (Path(CHROMIUM).exists() and Path(CHROMEDRIVER).exists()):
    if os.environ.get("CI"):
        raise RuntimeError("CI needs chromium and chromium-driver (.ci/run installs them)")
    pytest.skip("no Chromium here (apt-get install chromium chromium-driver)", allow_module_level=True)

webdriver = pytest.importorskip("selenium.webdriver")
from selenium.webdriver.chrome.service import Service as DriverService  # noqa: E402
from selenium.webdriver.common.by import By  # noqa: E402
from selenium.webdriver.common.keys import Keys  # noqa: E402
from selenium.webdriver.support import expected_conditions as EC  # noqa: E402
from selenium.webdriver.support.ui import WebDriverWait  # noqa: E402


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    s = Server(tmp_path_factory.mktemp("workbench"), env={"HEATSCREEN_WORKERS": "1"}, name="workbench")
    s.start()
    yield s
    s.stop()


@pytest.fixture(scope="module")
def shots(tmp_path_factory):
    folder = os.environ.get("HEATSCREEN_SCREENSHOTS")
    if folder:
        Path(folder).mkdir(parents=True, exist_ok=True)
        return Path(folder)
    return tmp_path_factory.mktemp("screens")


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    opts = webdriver.ChromeOptions()
    opts.binary_location = CHROMIUM
    for arg in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-dev-shm-usage",
                "--window-size=1400,1000", f"--user-data-dir={tmp_path_factory.mktemp('chrome-profile')}"):
        opts.add_argument(arg)
    driver = webdriver.Chrome(service=DriverService(executable_path=CHROMEDRIVER), options=opts)
    driver.set_page_load_timeout(60)
    yield driver
    driver.quit()


def _wait(driver, locator, timeout=90):
    return WebDriverWait(driver, timeout).until(EC.presence_of_element_located(locator))


def _full_page_shot(browser, path: Path) -> None:
    height = browser.execute_script("return document.documentElement.scrollHeight")
    browser.set_window_size(1400, min(max(height, 1000), 6000))
    browser.save_screenshot(str(path))
    browser.set_window_size(1400, 1000)


def _screen_demo(browser, server, name: str) -> str:
    browser.get(server.url + f"/?demo={name}")
    browser.find_element(By.ID, "screen").click()
    _wait(browser, (By.ID, "verdict"))
    return browser.current_url


def test_temperature_history_chart_is_in_the_rendered_dom(server, browser, shots):
    _screen_demo(browser, server, "fw-t204-hold-tank")
    svg = _wait(browser, (By.CSS_SELECTOR, "svg#history-chart"))
    assert svg.is_displayed() and svg.get_attribute("role") == "img"
    assert browser.find_element(By.CSS_SELECTOR, "#history-chart title").get_attribute("textContent") \
        == "Temperature history of the contents"
    line = browser.find_element(By.CSS_SELECTOR, "#history-chart polyline.series")
    points = line.get_attribute("points").split()
    assert len(points) >= 400  # the history the memo draws: 401 points plus turning points and crossings
    marks = [m.get_attribute("textContent") for m in browser.find_elements(By.CSS_SELECTOR, "#history-chart line.mark")]
    assert any(m.startswith("quality limit 45.0") for m in marks)
    assert any(m.startswith("decomposition onset margin 60.0") for m in marks)
    assert any(m.startswith("detection ") for m in marks) and any(m.startswith("detection + response") for m in marks)
    # the text alternative: limit times, then every plotted point
    times = browser.find_element(By.ID, "history-times").text
    assert "quality limit" in times and "7.689 h" in times and "not reached within the horizon" in times
    rows = browser.find_elements(By.CSS_SELECTOR, "#history-points tr")
    assert len(rows) - 1 == len(points)
    assert not browser.find_elements(By.CSS_SELECTOR, "script[src]")  # no external scripts
    assert browser.find_element(By.ID, "derived").text.count("J/K") >= 3
    _full_page_shot(browser, shots / "workbench-result.png")


def test_daily_cycle_history_is_drawn(server, browser, shots):
    """FW-D52 (drums in the summer sun): the chart draws the whole history from the chosen start time of day, the
    daily peaks show in its plotted points, and the key numbers say which temperatures are daily means."""
    _screen_demo(browser, server, "fw-d52-drum-yard")
    svg = _wait(browser, (By.CSS_SELECTOR, "svg#history-chart"))
    assert svg.is_displayed()
    points = browser.find_element(By.CSS_SELECTOR, "#history-chart polyline.series").get_attribute("points").split()
    rows = browser.find_elements(By.CSS_SELECTOR, "#history-points tr")
    assert len(rows) - 1 == len(points) >= 400
    cells = [[c.get_attribute("textContent") for c in r.find_elements(By.TAG_NAME, "td")] for r in rows[1:]]
    hours, temps = [float(c[0]) for c in cells], [float(c[1]) for c in cells]  # in a closed <details>: textContent
    assert hours[0] == 0.0 and hours[-1] == pytest.approx(72.0)  # the 3 d horizon, from the start
    # one afternoon peak a day over the 3 days (the air and the sun), the highest being the reported peak
    peaks = [i for i in range(1, len(temps) - 1) if temps[i] > temps[i - 1] and temps[i] >= temps[i + 1]]
    assert len(peaks) == 3
    marks = [m.get_attribute("textContent") for m in browser.find_elements(By.CSS_SELECTOR, "#history-chart line.mark")]
    assert any(m.startswith("flash point of the blend 38.0") for m in marks)
    page = browser.find_element(By.TAG_NAME, "main").text
    assert "Ambient temperature (daily mean)" in page and "Steady temperature (daily mean)" in page
    assert "Effective ambient, daily maximum" in page
    assert "not shown to be a bound" in page  # UA = 0 is no bound: the drum starts below the sunny afternoon
    _full_page_shot(browser, shots / "workbench-daily-cycle.png")


def test_edit_and_screen_again_then_compare(server, browser, shots):
    first = _screen_demo(browser, server, "fw-t204-hold-tank")
    first_id = first.rstrip("/").split("/")[-1].split("?")[0]
    area = browser.find_element(By.ID, "case_text")
    text = area.get_attribute("value")
    assert "id: FW-T204" in text
    edited = text.replace("power: 2.2 kW", "power: 6.6 kW", 1)
    assert edited != text
    browser.execute_script("arguments[0].value = arguments[1];", area, edited)
    browser.find_element(By.ID, "screen-again").click()
    _wait(browser, (By.ID, "compare-link"))
    assert f"previous={first_id}" in browser.current_url
    # the editor keeps the edited text
    assert browser.find_element(By.ID, "case_text").get_attribute("value") == edited.replace("\r\n", "\n")
    browser.find_element(By.ID, "compare-link").click()
    diff = _wait(browser, (By.ID, "input-diff")).text
    assert "heat_sources.0.power" in diff and "2.2 kW" in diff and "6.6 kW" in diff
    assert "Inputs that differ (1)" in browser.find_element(By.ID, "inputs-differ").text
    moved = browser.find_element(By.ID, "result-diff").text
    assert "Time to 'quality limit'" in moved and "moved" in moved
    assert browser.find_element(By.CSS_SELECTOR, "svg#a-history-chart").is_displayed()
    assert browser.find_element(By.CSS_SELECTOR, "svg#b-history-chart").is_displayed()
    _full_page_shot(browser, shots / "workbench-compare.png")
    # the comparison form on its own
    browser.get(server.url + "/ui/compare")
    assert browser.find_element(By.ID, "run-a").get_attribute("id") and browser.find_element(By.ID, "run-b")
    browser.find_element(By.ID, "compare").click()
    _wait(browser, (By.ID, "result-diff"))


_CONTROLS_JS = """
const out = [];
for (const el of document.querySelectorAll('input:not([type=hidden]), select, textarea, button')) {
  const named = (el.labels && el.labels.length) || el.getAttribute('aria-label') || (el.tagName === 'BUTTON' && el.textContent.trim());
  if (!named) out.push(el.outerHTML.slice(0, 80));
}
return out;
"""

_CONTRAST_JS = """
function rgb(s) { const m = s.match(/[0-9.]+/g); return m ? m.map(Number) : [0, 0, 0, 1]; }
function lum(c) { const f = v => { v /= 255; return v <= 0.03928 ? v / 12.92 : Math.pow((v + 0.055) / 1.055, 2.4); };
  return 0.2126 * f(c[0]) + 0.7152 * f(c[1]) + 0.0722 * f(c[2]); }
function bg(el) { for (let e = el; e; e = e.parentElement) { const c = rgb(getComputedStyle(e).backgroundColor);
  if (c.length < 4 || c[3] > 0) return c; } return [255, 255, 255]; }
const worst = [];
const walker = document.createTreeWalker(document.body, NodeFilter.SHOW_TEXT);
while (walker.nextNode()) {
  const n = walker.currentNode; if (!n.textContent.trim()) continue;
  const el = n.parentElement; if (!el || el.closest('svg') || el.offsetParent === null) continue;
  const a = lum(rgb(getComputedStyle(el).color)), b = lum(bg(el));
  const r = (Math.max(a, b) + 0.05) / (Math.min(a, b) + 0.05);
  if (r < 4.5) worst.push([r, n.textContent.trim().slice(0, 40)]);
}
for (const t of document.querySelectorAll('svg text')) {
  const f = t.getAttribute('fill'); if (!f || !f.startsWith('#')) continue;
  const c = [1, 3, 5].map(i => parseInt(f.slice(i, i + 2), 16));
  const r = (1.05) / (lum(c) + 0.05);
  if (r < 4.5) worst.push([r, 'svg: ' + t.textContent.slice(0, 40)]);
}
return worst;
"""


def test_accessible_labels_keyboard_and_contrast(server, browser):
    _screen_demo(browser, server, "fw-t302-monomer-tank")  # with the uncertainty charts
    _wait(browser, (By.ID, "cdf-chart"))
    assert browser.find_element(By.ID, "sensitivity-chart").is_displayed()
    assert browser.execute_script(_CONTROLS_JS) == []
    assert browser.execute_script(_CONTRAST_JS) == []
    # every control and link reachable with the Tab key, in order
    body = browser.find_element(By.TAG_NAME, "body")
    body.click()
    seen = set()
    for _ in range(200):
        browser.switch_to.active_element.send_keys(Keys.TAB)
        el = browser.switch_to.active_element
        seen.add(el.get_attribute("id") or el.get_attribute("href") or el.tag_name)
        if {"case_text", "screen-again", "memo-link"} <= seen:
            break
    assert {"case_text", "screen-again", "memo-link"} <= seen, seen
    for path in ("/", "/ui/compare", "/ui/runs"):
        browser.get(server.url + path)
        assert browser.execute_script(_CONTROLS_JS) == [], path
        assert browser.execute_script(_CONTRAST_JS) == [], path
