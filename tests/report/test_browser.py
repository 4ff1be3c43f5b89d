"""report.html in a real browser: headless Chromium opens it from disk with the network off.

No console error, no request that leaves the file, every section heading there,
a screenshot that is not blank, and a PDF when printed. Skipped locally when
Chromium, its driver or selenium is missing; never skipped in CI (the variable CI
is set there, and ``.ci/run`` installs the browser).
"""

from __future__ import annotations

import base64
import io
import json
import os
import shutil
from pathlib import Path

import numpy as np
import pytest
from recipe_runs import ALL

from foldwall.report._predictions import write_predictions
from foldwall.report._report import build_report, read_run, write_report

FLAGS = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--window-size=1200,1600",
)


def _missing(what: str) -> None:
    msg = f"{what} is needed for the browser tests (apt-get install chromium chromium-driver; pip install selenium)"
    if os.environ.get("CI"):
        pytest.fail(f"{msg}; CI must never skip them")
    pytest.skip(msg)


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    try:
        from selenium import webdriver
        from selenium.webdriver.chrome.service import Service
    except ImportError:
        _missing("selenium")
    binary = next(
        (p for p in map(shutil.which, ("chromium", "chromium-browser")) if p), None
    )
    driver_path = shutil.which("chromedriver")
    if binary is None or driver_path is None:
        _missing("chromium and chromedriver")
    opts = webdriver.ChromeOptions()
    opts.binary_location = binary
    for flag in FLAGS:
        opts.add_argument(flag)
    opts.add_argument(f"--user-data-dir={tmp_path_factory.mktemp('chromium-profile')}")
    opts.set_capability("goog:loggingPrefs", {"browser": "ALL", "performance": "ALL"})
    driver = webdriver.Chrome(
        service=Service(executable_path=driver_path), options=opts
    )
    try:
        driver.set_page_load_timeout(30)
        driver.execute_cdp_cmd("Network.enable", {})
        driver.execute_cdp_cmd(
            "Network.emulateNetworkConditions",
            {
                "offline": True,
                "latency": 0,
                "downloadThroughput": -1,
                "uploadThroughput": -1,
            },
        )
        yield driver
    finally:
        driver.quit()


def _open(driver, path: Path) -> dict:
    import json

    driver.get_log("browser")  # drop what an earlier page left
    driver.get_log("performance")
    driver.get(path.resolve().as_uri())
    driver.execute_script("return document.readyState")
    console = driver.get_log("browser")
    requests = []
    for entry in driver.get_log("performance"):
        msg = json.loads(entry["message"])["message"]
        if msg.get("method") == "Network.requestWillBeSent":
            requests.append(msg["params"]["request"]["url"])
    headings = [h.text for h in driver.find_elements("tag name", "h2")]
    png = driver.get_screenshot_as_png()
    pdf = base64.b64decode(
        driver.execute_cdp_cmd("Page.printToPDF", {"printBackground": True})["data"]
    )
    return {
        "console": console,
        "requests": requests,
        "headings": headings,
        "png": png,
        "pdf": pdf,
    }


def _not_blank(png: bytes) -> None:
    from matplotlib.image import imread

    img = imread(io.BytesIO(png), format="png")[..., :3]
    assert img.shape[0] > 500 and img.shape[1] > 800
    ink = np.mean(
        np.any(img < 0.85, axis=-1)
    )  # share of pixels that are not (nearly) white
    assert 0.01 < ink < 0.6, ink
    assert img.std() > 0.05


def _check_page(browser, html: Path) -> None:
    results, plan, predictions = read_run(html.parent)
    titles = [s.title for s in build_report(results, plan, predictions).sections]
    seen = _open(browser, html)
    errors = [e for e in seen["console"] if e.get("level") in ("SEVERE", "ERROR")]
    assert not errors, errors
    leaving = [u for u in seen["requests"] if not (u.startswith(("file:", "data:")))]
    assert not leaving, leaving
    assert seen["requests"] == [html.resolve().as_uri()]  # the page, nothing else
    assert seen["headings"] == titles
    _not_blank(seen["png"])
    assert seen["pdf"].startswith(b"%PDF") and len(seen["pdf"]) > 20_000


def test_report_opens_offline_without_errors(browser, classification_run, tmp_path):
    run = classification_run
    out = tmp_path / "run"
    write_predictions(run.predictions, out.parent / "p.csv")
    files = write_report(out, run.results, run.plan, run.predictions)
    (out / "results.json").write_text(json.dumps(run.results), encoding="utf-8")
    (out / "plan.json").write_text(json.dumps(run.plan), encoding="utf-8")
    write_predictions(run.predictions, out / "predictions.csv")
    _check_page(browser, files.html)


@pytest.mark.parametrize("name", ALL)
def test_recipe_report_opens_offline_without_errors(browser, recipe_run, name):
    _check_page(browser, recipe_run(name).out / "report.html")
