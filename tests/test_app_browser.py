"""The workbench in a real headless browser (Debian's chromium through selenium).

Starts ``streamlit run app.py`` on a free port, loads the page, runs the demo from the
start page, solves on the field page, extracts on the permittivity page, and saves a
screenshot of each under a temporary folder (``CAPBENCH_SCREENSHOTS`` names a folder to
keep them). ``make test`` installs chromium and chromium-driver with apt; where they
cannot be installed the test is skipped and says so.
"""

from __future__ import annotations

import os
import re
import shutil
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[1]
CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
DRIVER = shutil.which("chromedriver") or "/usr/bin/chromedriver"
WAIT = 180  # s: the first solve on a shared 2-core machine


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="module")
def server():
    port = _free_port()
    proc = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "streamlit",
            "run",
            str(ROOT / "app.py"),
            "--server.headless",
            "true",
            "--server.port",
            str(port),
            "--server.address",
            "127.0.0.1",
            "--browser.gatherUsageStats",
            "false",
        ],
        cwd=ROOT,
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
    )
    url = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 90
        while True:
            try:
                with urllib.request.urlopen(f"{url}/_stcore/health", timeout=2) as r:
                    if r.read().strip() == b"ok":
                        break
            except OSError:
                pass
            if proc.poll() is not None or time.monotonic() > deadline:
                out = proc.stdout.read().decode(errors="replace") if proc.stdout else ""
                pytest.fail(f"streamlit did not start on {url}: {out[-2000:]}")
            time.sleep(0.5)
        yield url
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=15)
        except subprocess.TimeoutExpired:
            proc.kill()


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    try:
        from selenium import webdriver
        from selenium.webdriver.chrome.service import Service
    except ImportError:
        pytest.skip("selenium is not installed (pip install -e '.[test]')")
    if not (os.access(CHROMIUM, os.X_OK) and os.access(DRIVER, os.X_OK)):
        pytest.skip(
            "Debian's chromium and chromium-driver are not installed and could not be "
            "(make test runs apt-get install -y chromium chromium-driver where apt works)"
        )
    opts = webdriver.ChromeOptions()
    opts.binary_location = CHROMIUM
    for flag in (
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--disable-dev-shm-usage",
        "--window-size=1400,1800",
        f"--user-data-dir={tmp_path_factory.mktemp('chromium-profile')}",
    ):
        opts.add_argument(flag)
    driver = webdriver.Chrome(service=Service(executable_path=DRIVER), options=opts)
    try:
        yield driver
    finally:
        driver.quit()


def _shots(tmp_path: Path) -> Path:
    keep = os.environ.get("CAPBENCH_SCREENSHOTS")
    folder = Path(keep) if keep else tmp_path
    folder.mkdir(parents=True, exist_ok=True)
    return folder


def _click_button(driver, text: str) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support import expected_conditions as ec
    from selenium.webdriver.support.ui import WebDriverWait

    xpath = f"//button[.//p[normalize-space()={text!r}] or normalize-space()={text!r}]"
    button = WebDriverWait(driver, WAIT).until(ec.element_to_be_clickable((By.XPATH, xpath)))
    driver.execute_script("arguments[0].scrollIntoView({block: 'center'});", button)
    button.click()


def _metric(driver, label_start: str) -> str:
    """Wait for a metric whose label starts with ``label_start``; return its value."""
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import WebDriverWait

    def find(d):
        for m in d.find_elements(By.CSS_SELECTOR, '[data-testid="stMetric"]'):
            label = m.find_element(By.CSS_SELECTOR, '[data-testid="stMetricLabel"]').text
            if label.strip().startswith(label_start):
                value = m.find_element(By.CSS_SELECTOR, '[data-testid="stMetricValue"]').text
                return value or False
        return False

    from selenium.common.exceptions import StaleElementReferenceException

    # the page redraws while the script runs: an element found may be replaced at once
    return WebDriverWait(
        driver, WAIT, poll_frequency=0.05, ignored_exceptions=(StaleElementReferenceException,)
    ).until(find)


def _settled(driver, appear: float = 10.0) -> None:
    """Wait until the script run a click started has finished. A run that computes
    shows a spinner or a progress bar (a faded earlier result may stay on the page
    meanwhile): wait up to ``appear`` s for one to show, then for it to go. A run
    that shows none (a cached result) is done when ``appear`` has passed."""
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import WebDriverWait

    busy_css = '[data-testid="stSpinner"], [data-testid="stProgress"]'

    def busy(d):
        return bool(d.find_elements(By.CSS_SELECTOR, busy_css))

    end = time.monotonic() + appear
    while time.monotonic() < end and not busy(driver):
        time.sleep(0.1)
    WebDriverWait(driver, WAIT).until(lambda d: not busy(d))


def _page(driver, title: str) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support import expected_conditions as ec
    from selenium.webdriver.support.ui import WebDriverWait

    link = WebDriverWait(driver, WAIT).until(
        ec.element_to_be_clickable(
            (By.XPATH, f'//a[@data-testid="stSidebarNavLink"][.//p[normalize-space()={title!r}]]')
        )
    )
    link.click()


def _no_exception(driver) -> None:
    from selenium.webdriver.common.by import By

    assert not driver.find_elements(By.CSS_SELECTOR, '[data-testid="stException"]')
    assert "Traceback" not in driver.find_element(By.TAG_NAME, "body").text


def test_browser_demo_solve_and_extract(server, browser, tmp_path):
    from selenium.webdriver.common.by import By

    folder = _shots(tmp_path)
    browser.get(server)
    _click_button(browser, "Solve and extract the loaded measurement")
    _settled(browser)
    eps = _metric(browser, "eps' at 1 kHz")
    assert re.fullmatch(r"2\.304\d ± 0\.003\d", eps), eps
    _no_exception(browser)
    browser.save_screenshot(str(folder / "1-start-demo.png"))

    _page(browser, "Field solve")
    _settled(browser, appear=3.0)
    _click_button(browser, "Solve the field")
    _settled(browser, appear=3.0)  # the demo's solve is cached: no progress bar shows
    cap = _metric(browser, "Capacitance, direct")
    assert cap.endswith("pF") and float(cap.split()[0]) == pytest.approx(20.707, rel=1e-3), cap
    _metric(browser, "Relative error")
    _no_exception(browser)
    browser.save_screenshot(str(folder / "2-field-solve.png"))

    _page(browser, "Permittivity")
    _settled(browser, appear=3.0)
    _click_button(browser, "Find eps'")
    _settled(browser)
    eps2 = _metric(browser, "eps' at 1 kHz")
    assert eps2 == eps
    assert re.search(r"\d+ field solves in", browser.find_element(By.TAG_NAME, "body").text)
    _no_exception(browser)
    browser.save_screenshot(str(folder / "3-permittivity.png"))
    for name in ("1-start-demo.png", "2-field-solve.png", "3-permittivity.png"):
        assert (folder / name).stat().st_size > 10_000


def _upload(driver, path: Path, nth: int = 0) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import WebDriverWait

    inputs = WebDriverWait(driver, WAIT).until(
        lambda d: d.find_elements(By.CSS_SELECTOR, 'input[type="file"]')
    )
    inputs[nth].send_keys(str(path))


def test_browser_uploads_fixture_file_and_readings_table(server, browser, tmp_path):
    """A saved fixture file and a readings table go in through the page's uploaders; a
    file of the wrong kind gets an inline message, not a traceback."""
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import WebDriverWait

    import capbench as cb
    from capbench import files

    folder = _shots(tmp_path)
    fx = cb.parallel_discs(radius="30 mm", gap="3 mm", name="uploaded discs")
    saved = tmp_path / "uploaded-discs.toml"
    files.write_fixture(fx, saved)
    browser.get(server)
    _settled(browser, appear=3.0)
    _page(browser, "Fixture")
    _settled(browser, appear=3.0)
    _upload(browser, saved)

    def radius_box(d):
        boxes = d.find_elements(By.XPATH, "//input[@aria-label='Disc radius [mm]']")
        return boxes and boxes[0].get_attribute("value") == "30 mm"

    WebDriverWait(browser, WAIT, poll_frequency=0.1).until(radius_box)
    # the discs' form replaces the guarded cell's: its boxes go once the run ends
    WebDriverWait(browser, WAIT, poll_frequency=0.1).until(
        lambda d: (
            not d.find_elements(By.XPATH, "//input[@aria-label='Air gap above the specimen [mm]']")
        )
    )
    gap = browser.find_element(By.XPATH, "//input[@aria-label='Electrode spacing [mm]']")
    assert gap.get_attribute("value") == "3 mm"
    _no_exception(browser)
    browser.save_screenshot(str(folder / "4-fixture-loaded.png"))

    # not a fixture file: the message names the file and what is wrong, inline
    bad = tmp_path / "not-a-fixture.toml"
    bad.write_text('schema = "something/9"\n', encoding="utf-8")
    _upload(browser, bad)
    WebDriverWait(browser, WAIT, poll_frequency=0.1).until(
        lambda d: (
            "Load fixture file: not-a-fixture.toml" in d.find_element(By.TAG_NAME, "body").text
        )
    )
    _no_exception(browser)

    # a readings table uploaded on the Permittivity page replaces the table's text
    table = tmp_path / "two-frequencies.csv"
    table.write_text(
        "frequency [Hz],capacitance [pF],dissipation factor\n"
        "1000,20.6133,0.000254\n1000,20.6131,0.000255\n10000,20.6068,0.000312\n",
        encoding="utf-8",
    )
    _page(browser, "Permittivity")
    _settled(browser, appear=3.0)
    _upload(browser, table)
    WebDriverWait(browser, WAIT, poll_frequency=0.1).until(
        lambda d: "3 readings at 2 frequencies" in d.find_element(By.TAG_NAME, "body").text
    )
    _no_exception(browser)
