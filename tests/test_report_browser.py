"""report.html in headless Chromium: no console errors, every figure decoded, no script runs.

Needs the Debian packages ``chromium`` and ``chromium-driver`` (/usr/bin/chromium,
/usr/bin/chromedriver). When they are missing and the tests run as root they are
installed with apt-get; otherwise the tests are skipped with the reason.
"""

from __future__ import annotations

import base64
import copy
import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from uqthermo.report import write_report

pytestmark = pytest.mark.browser

CHROMIUM = "/usr/bin/chromium"
CHROMEDRIVER = "/usr/bin/chromedriver"
FIXTURE = Path(__file__).parent / "fixtures" / "results_sample.json"


def _ensure_browser() -> str | None:
    """None when Chromium and its driver are usable, else the reason to skip."""
    try:
        import selenium  # noqa: F401
    except ImportError:
        return "selenium is not installed"
    if os.path.exists(CHROMIUM) and os.path.exists(CHROMEDRIVER):
        return None
    if hasattr(os, "geteuid") and os.geteuid() == 0 and shutil.which("apt-get"):
        env = dict(os.environ, DEBIAN_FRONTEND="noninteractive")
        try:
            subprocess.run(["apt-get", "install", "-y", "chromium", "chromium-driver"], env=env, check=False,
                           stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, timeout=900)
            if not (os.path.exists(CHROMIUM) and os.path.exists(CHROMEDRIVER)):
                subprocess.run(["apt-get", "update"], env=env, check=False, stdout=subprocess.DEVNULL,
                               stderr=subprocess.DEVNULL, timeout=600)
                subprocess.run(["apt-get", "install", "-y", "chromium", "chromium-driver"], env=env, check=False,
                               stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, timeout=900)
        except (OSError, subprocess.TimeoutExpired) as exc:
            return f"could not install chromium/chromium-driver with apt-get: {exc}"
        if os.path.exists(CHROMIUM) and os.path.exists(CHROMEDRIVER):
            return None
        return "apt-get could not install the Debian packages chromium and chromium-driver"
    return f"{CHROMIUM} / {CHROMEDRIVER} missing (Debian packages chromium, chromium-driver) and not root to install them"


@pytest.fixture(scope="module")
def driver(tmp_path_factory):
    reason = _ensure_browser()
    if reason:
        pytest.skip(reason)
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    opts = webdriver.ChromeOptions()
    opts.binary_location = CHROMIUM
    for a in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
              "--disable-component-update", "--disable-sync", "--no-first-run",
              f"--user-data-dir={tmp_path_factory.mktemp('chromium-profile')}", "--window-size=1200,900"):
        opts.add_argument(a)
    opts.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    d = webdriver.Chrome(service=Service(CHROMEDRIVER), options=opts)
    d.set_page_load_timeout(60)
    yield d
    d.quit()


@pytest.fixture(scope="module")
def results() -> dict:
    return json.loads(FIXTURE.read_text(encoding="utf-8"))


def _load(driver, path: Path) -> list[dict]:
    driver.get_log("browser")            # drop anything from earlier pages
    driver.get(path.resolve().as_uri())
    driver.execute_script("return document.readyState")
    return driver.get_log("browser")


def _full_page_png(driver) -> bytes:
    m = driver.execute_cdp_cmd("Page.getLayoutMetrics", {})
    size = m.get("cssContentSize") or m["contentSize"]
    shot = driver.execute_cdp_cmd("Page.captureScreenshot", {
        "format": "png", "captureBeyondViewport": True,
        "clip": {"x": 0, "y": 0, "width": size["width"], "height": size["height"], "scale": 1}})
    return base64.b64decode(shot["data"])


def test_report_renders_without_errors_and_every_figure_loads(driver, results, tmp_path):
    out = tmp_path / "out"
    write_report(results, out, formats=("html",))
    logs = _load(driver, out / "report.html")
    severe = [e for e in logs if e.get("level") == "SEVERE"]
    assert not severe, severe
    imgs = driver.execute_script(
        "return Array.from(document.images).map(i => ({src: i.src.slice(0, 30), w: i.naturalWidth, ok: i.complete}))")
    assert len(imgs) == 8
    assert all(i["ok"] and i["w"] > 0 for i in imgs), imgs
    # the document is laid out: title, the sections, the numbered tables
    assert driver.title.endswith("uncertainty report")
    n_tables = driver.execute_script("return document.querySelectorAll('table').length")
    assert n_tables >= 15
    png = _full_page_png(driver)
    shot = tmp_path / "report-full-page.png"
    shot.write_bytes(png)
    assert png[:8] == b"\x89PNG\r\n\x1a\n" and shot.stat().st_size > 50_000
    # printable: the PDF has several pages (print CSS breaks before sections)
    pdf = base64.b64decode(driver.execute_cdp_cmd("Page.printToPDF", {"printBackground": True})["data"])
    assert pdf[:5] == b"%PDF-"
    assert len(re.findall(rb"/Type\s*/Page[^s]", pdf)) >= 5    # sections start on new pages
    # printed width: nothing wider than the page (A4 less 2 x 15 mm, about 680 CSS px)
    driver.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": "print"})
    driver.set_window_size(720, 1000)
    width = driver.execute_script("return document.documentElement.scrollWidth")
    driver.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": ""})
    driver.set_window_size(1200, 900)
    assert width <= 720, f"printed layout is {width} px wide"


def test_script_in_title_does_not_run(driver, results, tmp_path):
    r = copy.deepcopy(results)
    r["case"]["title"] = "<script>window.__pwned = 1</script>Hydrogenation"
    r["outputs"][0]["name"] = "<img src=x onerror=\"window.__pwned2 = 1\">"
    r["warnings"].append("<svg onload=\"window.__pwned3 = 1\"></svg>")
    write_report(r, tmp_path, formats=("html",), figures=False)
    logs = _load(driver, tmp_path / "report.html")
    assert not [e for e in logs if e.get("level") == "SEVERE"], logs
    assert driver.execute_script("return [window.__pwned, window.__pwned2, window.__pwned3]") == [None, None, None]
    assert driver.execute_script("return document.querySelectorAll('script, svg, iframe').length") == 0
    h1 = driver.execute_script("return document.querySelector('h1').textContent")
    assert h1 == "<script>window.__pwned = 1</script>Hydrogenation"


def _shots_dir(tmp_path: Path) -> Path:
    """Where screenshots go: $UQTHERMO_SCREENSHOTS (to look at them) or the test's tmp_path."""
    d = Path(os.environ.get("UQTHERMO_SCREENSHOTS") or tmp_path)
    d.mkdir(parents=True, exist_ok=True)
    return d


def test_concise_section_and_narrow_screens(driver, results, tmp_path):
    """The concise section renders first (document control, statements, budgets, cautions) and
    no table loses columns at 800 px: concise tables reflow to fit, appendix tables fit or scroll."""
    out = tmp_path / "out"
    write_report(results, out, formats=("html",))
    shots = _shots_dir(tmp_path)
    for width in (1280, 800):
        driver.set_window_size(width, 1000)
        _load(driver, out / "report.html")
        info = driver.execute_script("""
            const c = document.querySelector('section#concise');
            const tables = Array.from(document.querySelectorAll('table')).map(t => {
              const w = t.closest('.table-wrap');
              return {concise: !!t.closest('section#concise'), tw: t.getBoundingClientRect().width,
                      ww: w ? w.clientWidth : null, sw: w ? w.scrollWidth : null,
                      ox: w ? getComputedStyle(w).overflowX : null};
            });
            return {page: document.documentElement.scrollWidth, view: window.innerWidth,
                    top: c ? c.getBoundingClientRect().top + window.scrollY : -1,
                    appendix: document.querySelector('section#appendix').getBoundingClientRect().top + window.scrollY,
                    statements: document.querySelectorAll('#concise .statement').length,
                    nums: document.querySelectorAll('#concise span.num[data-path]').length,
                    doc: document.querySelector('#document-control').innerText,
                    budgets: document.querySelectorAll('#budgets table').length,
                    figures: document.querySelectorAll('#budgets figure img').length,
                    cautions: document.querySelector('#cautions').innerText,
                    tables: tables};
        """)
        assert info["page"] <= info["view"], f"page scrolls sideways at {width} px"
        assert 0 < info["top"] < info["appendix"]
        assert info["statements"] == len(results["outputs"]) and info["nums"] > 30
        assert "FIX-0001" in info["doc"] and results["case"]["sha256"] in info["doc"].replace("\n", "")
        assert info["budgets"] == len(results["outputs"]) and info["figures"] == len(results["outputs"])
        assert "calorimetry" in info["cautions"]
        for t in info["tables"]:
            if t["ww"] is None:
                continue
            if t["concise"]:
                assert t["tw"] <= t["ww"] + 1, (width, t)          # reflowed: every column visible
            else:
                assert t["tw"] <= t["ww"] + 1 or t["ox"] == "auto", (width, t)   # or it scrolls
        png = _full_page_png(driver)
        (shots / f"report-{width}.png").write_bytes(png)
        assert png[:8] == b"\x89PNG\r\n\x1a\n"
    driver.set_window_size(1200, 900)
