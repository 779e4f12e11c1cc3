"""The live page in a real browser: Debian's headless chromium driven through chromedriver (both
installed by .ci/run). Loads the page, moves the rise control with the keyboard as a user would, and
sees the thrust follow the closed form; types a rise no case file accepts and sees the message in
the page while the server keeps answering."""

from __future__ import annotations

import os
import re
import shutil
import threading
import time
from pathlib import Path

import pytest

from formfind.explore.answer import Explorer
from formfind.explore.server import ExploreApp
from tests.test_explore import DECK, L, Q


def _browser_paths() -> tuple[str, str] | None:
    browser = next((shutil.which(n) for n in ("chromium", "chromium-browser", "google-chrome") if shutil.which(n)),
                   None)
    driver = shutil.which("chromedriver")
    return (browser, driver) if browser and driver else None


@pytest.fixture(scope="module")
def browser():
    webdriver = pytest.importorskip("selenium.webdriver")
    paths = _browser_paths()
    if paths is None:
        if os.environ.get("CI"):
            pytest.fail("CI must install chromium and chromium-driver (.ci/run does) to test the page in a browser")
        pytest.skip("no chromium and chromedriver on this machine (CI installs them)")
    from selenium.webdriver.chrome.options import Options
    from selenium.webdriver.chrome.service import Service

    options = Options()
    for arg in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                "--window-size=1300,1100"):
        options.add_argument(arg)
    options.binary_location = paths[0]
    driver = webdriver.Chrome(service=Service(paths[1]), options=options)
    yield driver
    driver.quit()


@pytest.fixture(scope="module")
def address(tmp_path_factory):
    from werkzeug.serving import make_server

    folder = tmp_path_factory.mktemp("browser")
    (folder / "pagetest.toml").write_text(DECK)
    server = make_server("127.0.0.1", 0, ExploreApp(Explorer(folder / "pagetest.toml"), folder), threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{server.server_port}/"
    server.shutdown()


def _wait(predicate, timeout=60.0):
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        value = predicate()
        if value:
            return value
        time.sleep(0.05)
    raise AssertionError("the page did not answer in time")


def _thrust(driver) -> float | None:
    match = re.match(r"([0-9.eE+-]+) kN", driver.find_element("id", "thrust").text)
    return float(match.group(1)) if match else None


def test_moving_the_rise_changes_the_thrust_and_bad_values_show_in_the_page(browser, address):
    from selenium.webdriver.common.keys import Keys

    driver = browser
    driver.get(address)
    _wait(lambda: driver.execute_script("return document.body.dataset.answered"))
    # three-hinged arch, uniform load: H = q L^2 / (8 f) (beam analogy; see tests/test_explore.py)
    assert _thrust(driver) == pytest.approx(Q * L**2 / (8 * 6.0), rel=1e-3)
    before = _thrust(driver)
    slider = driver.find_element("id", "rise_m-range")
    slider.click()  # focus; a click also moves it to where it was clicked
    for _ in range(25):
        slider.send_keys(Keys.ARROW_RIGHT)
    rise = _wait(lambda: (float(driver.find_element("id", "rise_m").get_attribute("value"))
                          if _thrust(driver) != before else None))
    _wait(lambda: driver.execute_script("return document.getElementById('status').textContent").startswith("answered"))
    rise = float(driver.find_element("id", "rise_m").get_attribute("value"))
    assert rise != pytest.approx(6.0)
    assert _thrust(driver) == pytest.approx(Q * L**2 / (8 * rise), rel=1e-3)
    # the rib is drawn: the elevation holds the rib, the axis and the supports
    assert driver.execute_script("return document.querySelectorAll('#elevation path').length") >= 4

    box = driver.find_element("id", "rise_m")
    box.clear()
    box.send_keys("45", Keys.TAB)  # rise/span 1.5: no case file takes it
    message = _wait(lambda: driver.find_element("id", "error").text)
    assert "geometry.rise_m" in message and "rise/span" in message
    box = driver.find_element("id", "rise_m")
    box.clear()
    box.send_keys("5", Keys.TAB)
    _wait(lambda: not driver.find_element("id", "error").is_displayed())
    assert _thrust(driver) == pytest.approx(Q * L**2 / (8 * 5.0), rel=1e-3)


def test_page_loads_nothing_from_elsewhere(browser, address):
    driver = browser
    driver.get(address)
    _wait(lambda: driver.execute_script("return document.body.dataset.answered"))
    urls = driver.execute_script("return performance.getEntriesByType('resource').map(e => e.name)")
    assert urls and all(u.startswith(address) for u in urls), urls
    html = Path(__file__).resolve().parents[1] / "formfind" / "explore" / "static" / "index.html"
    assert "https://" not in html.read_text()
