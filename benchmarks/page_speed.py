"""Click "Solve the field" to seeing the capacitance: the workbench page against the library.

Goal (issue 6): under 2 s for the demo fixture (Quillfield bench 3 guarded cell). Three
measurements of the same cold solve (each in a fresh process, so neither the solve cache
of the page nor the mesh cache of the library helps), printed side by side:

1. library: ``capbench.solve(fixture)`` alone, the floor;
2. AppTest: the Field solve page's whole script run after the click (the result, the
   matrix and the potential picture), through ``streamlit.testing.v1.AppTest``;
3. browser (when Debian's chromium and selenium are there): a real page on a fresh
   server, from the click to the capacitance appearing on the screen.

    python benchmarks/page_speed.py
"""

from __future__ import annotations

import json
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

LIBRARY = """
import json, time
from capbench import workbench as wb
import capbench as cb
d = wb.demo()
fx = wb.read_fixture_form(d.builder, d.fixture_texts, d.fixture_name).fixture
t = time.perf_counter(); sol = cb.solve(fx, rtol=1e-6); dt = time.perf_counter() - t
print(json.dumps({"seconds": dt, "pF": sol.capacitance.to("pF").magnitude}))
"""

APPTEST = """
import json, time
from streamlit.testing.v1 import AppTest
at = AppTest.from_file(%r, default_timeout=300).run()
at.switch_page("bench_pages/solve.py").run()
t = time.perf_counter(); at.button(key="solve.run").click().run(); dt = time.perf_counter() - t
assert not at.exception, at.exception
value = [m.value for m in at.metric if m.label.startswith("Capacitance")][0]
print(json.dumps({"seconds": dt, "shown": value}))
"""


def _run(code: str) -> dict:
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def _browser() -> dict | None:
    sys.path.insert(0, str(ROOT / "tests"))
    try:
        import test_app_browser as tb
        from selenium import webdriver
        from selenium.webdriver.chrome.service import Service
        from selenium.webdriver.common.by import By
        from selenium.webdriver.support.ui import WebDriverWait
    except ImportError:
        return None
    import os
    import tempfile

    if not (os.access(tb.CHROMIUM, os.X_OK) and os.access(tb.DRIVER, os.X_OK)):
        return None
    port = tb._free_port()
    server = subprocess.Popen(
        [
            sys.executable, "-m", "streamlit", "run", str(ROOT / "app.py"),
            "--server.headless", "true", "--server.port", str(port),
            "--server.address", "127.0.0.1",
        ],
        cwd=ROOT,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )  # fmt: skip
    opts = webdriver.ChromeOptions()
    opts.binary_location = tb.CHROMIUM
    with tempfile.TemporaryDirectory() as profile:
        for flag in (
            "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
            "--disable-background-networking", "--disable-component-update", "--disable-sync",
            "--window-size=1400,1800", f"--user-data-dir={profile}",
        ):  # fmt: skip
            opts.add_argument(flag)
        driver = webdriver.Chrome(service=Service(executable_path=tb.DRIVER), options=opts)
        try:
            time.sleep(3)
            driver.get(f"http://127.0.0.1:{port}/solve")
            # the first run of the page (imports) must be over before the click
            WebDriverWait(driver, 300, poll_frequency=0.1).until(
                lambda d: (
                    "results are cached per fixture" in d.find_element(By.TAG_NAME, "body").text
                )
            )
            time.sleep(1.0)
            t = time.perf_counter()
            tb._click_button(driver, "Solve the field")
            shown = tb._metric(driver, "Capacitance, direct")
            dt = time.perf_counter() - t
        finally:
            driver.quit()
            server.terminate()
            server.wait(timeout=15)
    return {"seconds": dt, "shown": shown}


def main(repeats: int = 3) -> None:
    lib = min((_run(LIBRARY) for _ in range(repeats)), key=lambda r: r["seconds"])
    app = min(
        (_run(APPTEST % str(ROOT / "app.py")) for _ in range(repeats)), key=lambda r: r["seconds"]
    )
    webs = [w for w in (_browser() for _ in range(repeats)) if w is not None]
    web = min(webs, key=lambda r: r["seconds"]) if webs else None
    print(
        "demo fixture (Quillfield bench 3 guarded cell), rtol 1e-6, cold caches; best of "
        f"{repeats} fresh processes each"
    )
    print(f"  library solve          {lib['seconds']:6.2f} s   ({lib['pF']:.7g} pF)")
    print(
        f"  page run (AppTest)     {app['seconds']:6.2f} s   ({app['shown']})   "
        f"ratio to library {app['seconds'] / lib['seconds']:.2f}"
    )
    if web is None:
        print("  browser                (skipped: no chromium/chromedriver or selenium)")
    else:
        print(
            f"  click to result (web)  {web['seconds']:6.2f} s   ({web['shown']})   "
            f"ratio to library {web['seconds'] / lib['seconds']:.2f}   (all runs: "
            + ", ".join(f"{w['seconds']:.2f}" for w in webs)
            + " s)"
        )
    print("  goal: under 2 s from the click to the result")


if __name__ == "__main__":
    main()
