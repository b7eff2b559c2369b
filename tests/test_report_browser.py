"""The HTML report in a real browser: Debian's Chromium, headless, at 1280×800, driven through
Debian's chromedriver by selenium. Each demo's report must load with no console error, draw
every figure (a non-empty SVG each, as many as expected), and show the limits section without
scrolling. Screenshots are saved as test artefacts in the folder the test prints.

Skipped only where no Chromium is installed; CI installs it (.ci/run) and sets
HXTRAIN_REQUIRE_BROWSER, so there it cannot skip."""

import os
import shutil
import tempfile
from pathlib import Path

import pytest

from hxtrain.solver import demo_case_path, simulate
from hxtrain.solver.reporting.display_units import Display
from hxtrain.solver.reporting.html_report import case_report

DEMOS = ("crude_preheat", "feed_effluent", "product_cooling", "desalter_and_reactor")
BROWSER = shutil.which("chromium") or shutil.which("chromium-browser")
DRIVER = shutil.which("chromedriver")
ARTEFACTS = Path(os.environ.get("HXTRAIN_ARTEFACTS", Path(tempfile.gettempdir()) / "hxtrain-report-screenshots"))

if not (BROWSER and DRIVER):
    if os.environ.get("HXTRAIN_REQUIRE_BROWSER"):
        raise RuntimeError("HXTRAIN_REQUIRE_BROWSER is set but chromium and chromedriver are not installed")
    pytest.skip("no Chromium installed (apt-get install chromium chromium-driver)", allow_module_level=True)


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    options = webdriver.ChromeOptions()
    options.binary_location = BROWSER
    for flag in ("--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run", "--window-size=1280,800",
                 f"--user-data-dir={tmp_path_factory.mktemp('chromium-profile')}"):
        options.add_argument(flag)
    options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    driver = webdriver.Chrome(service=Service(DRIVER), options=options)
    # the window size counts the (invisible) window frame; the page itself is to be 1280×800
    driver.execute_cdp_cmd("Emulation.setDeviceMetricsOverride",
                           {"width": 1280, "height": 800, "deviceScaleFactor": 1, "mobile": False})
    yield driver
    driver.quit()


@pytest.mark.parametrize("demo", DEMOS)
def test_the_report_renders_in_a_browser(demo, browser, tmp_path):
    result = simulate(demo_case_path(demo))
    page = tmp_path / f"{demo}.html"
    page.write_text(case_report(result, Display()), encoding="utf-8")
    browser.get(page.as_uri())
    size = browser.execute_script("return [window.innerWidth, window.innerHeight]")
    assert size == [1280, 800], f"viewport {size}"
    errors = [e for e in browser.get_log("browser") if e["level"] in ("SEVERE", "ERROR")]
    assert not errors, errors
    figures = browser.execute_script("""
        return Array.from(document.querySelectorAll('svg.network, svg.figure')).map(s => {
            const box = s.getBoundingClientRect();
            return [box.width, box.height, s.querySelectorAll('path, line, circle, rect, text').length];
        });""")
    exchangers = int((result.units["group"] == "exchangers").sum())
    assert len(figures) == 2 + exchangers, figures  # the network, the profiles, one T–Q picture per exchanger
    assert all(w > 50 and h > 50 and drawn > 5 for w, h, drawn in figures), figures
    top, bottom = browser.execute_script(
        "const b = document.getElementById('limits').getBoundingClientRect(); return [b.top, b.bottom];")
    assert 0 <= top and bottom <= 800, f"the limits section lies at {top}-{bottom} px, not within the first screen"
    ARTEFACTS.mkdir(parents=True, exist_ok=True)
    shot = ARTEFACTS / f"{demo}_1280x800.png"
    assert browser.save_screenshot(str(shot)) and shot.stat().st_size > 10_000
    print(f"\nscreenshot: {shot}")
