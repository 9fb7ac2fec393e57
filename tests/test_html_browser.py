"""The HTML report, opened in headless Chromium: it renders without console errors, fetches
nothing, and its SVG holds the hot-loop polygon and one marker per finding."""

from __future__ import annotations

import re
import shutil
import tempfile
from pathlib import Path

import pytest

from loopcheck.report.html import render_html
from reportfixtures import make_result

CHROMIUM = "/usr/bin/chromium"
CHROMEDRIVER = "/usr/bin/chromedriver"


def test_html_is_self_contained():
    html = render_html(make_result("sprawl", waivers=[("sense-kelvin", "RS1", "rev B")]))
    # no external fetches of any kind: no src/href to another origin, no scripts, no @import
    assert not re.search(r'(src|href)\s*=\s*"(https?:)?//', html)
    assert "<script" not in html and "@import" not in html and "url(" not in html
    assert "<link" not in html
    for text in ("does not certify", "creepage and clearance", "local codes and licensed practice"):
        assert text in html


def test_html_links_markers_and_rows():
    r = make_result("sprawl", waivers=[("sense-kelvin", "RS1", "rev B")])
    html = render_html(r)
    for i in range(len(r.findings)):
        fid = f"finding-{i + 1}"
        assert f'id="{fid}"' in html                 # the table row
        assert f'href="#{fid}"' in html              # the marker links to it
        assert f'id="marker-{fid}"' in html
    assert html.count('class="hot-loop"') == 1
    assert "182 mm²" in html
    assert 'class="route route-input-cap"' in html and 'class="route route-sense"' in html


@pytest.fixture(scope="module")
def driver():
    if not (Path(CHROMIUM).exists() and Path(CHROMEDRIVER).exists()):
        pytest.skip("headless Chromium and chromedriver are not installed "
                    "(apt-get install chromium chromium-driver)")
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    profile = tempfile.mkdtemp(prefix="lc-chrome-")
    opts = webdriver.ChromeOptions()
    opts.binary_location = CHROMIUM
    for a in ("--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
              "--disable-component-update", "--disable-sync", "--no-first-run",
              f"--user-data-dir={profile}", "--window-size=1400,1400"):
        opts.add_argument(a)
    opts.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    d = webdriver.Chrome(service=Service(CHROMEDRIVER), options=opts)
    yield d
    d.quit()
    shutil.rmtree(profile, ignore_errors=True)


@pytest.mark.browser
@pytest.mark.parametrize("variant", ["sprawl", "tidy"])
def test_html_renders_in_chromium(driver, tmp_path, variant):
    from selenium.webdriver.common.by import By

    r = make_result(variant, waivers=[("sense-kelvin", "RS1", "rev B")])
    page = tmp_path / "report.html"
    page.write_text(render_html(r), encoding="utf-8")
    driver.get(page.as_uri())
    logs = driver.get_log("browser")
    problems = [x for x in logs if x.get("level") in ("SEVERE", "WARNING")]
    assert problems == []
    svg = driver.find_element(By.ID, "board-view")
    assert svg.size["width"] > 300 and svg.size["height"] > 150
    # nothing is wider than the window (long messages wrap)
    assert driver.execute_script(
        "return document.documentElement.scrollWidth <= document.documentElement.clientWidth")
    loops = svg.find_elements(By.CSS_SELECTOR, "polygon.hot-loop")
    assert len(loops) == 1
    assert len(loops[0].get_attribute("points").split()) >= 3
    markers = svg.find_elements(By.CSS_SELECTOR, ".finding-marker")
    assert len(markers) == len(r.findings)
    assert {m.get_attribute("data-finding") for m in markers} == \
        {f"finding-{i + 1}" for i in range(len(r.findings))}
    # every marker is drawn inside the SVG's box
    box = svg.rect
    for m in markers:
        c = m.find_element(By.TAG_NAME, "circle").rect
        assert box["x"] - 1 <= c["x"] <= box["x"] + box["width"] + 1
        assert box["y"] - 1 <= c["y"] <= box["y"] + box["height"] + 1
    # no resource of any kind was fetched beyond the page itself
    entries = driver.execute_script(
        "return performance.getEntriesByType('resource').map(e => e.name)")
    assert entries == []
    # a copper layer can be hidden with its legend toggle (CSS only, no script)
    driver.find_element(By.CSS_SELECTOR, "label[for=show-layer-1]").click()
    layer = svg.find_element(By.CSS_SELECTOR, "g.layer-1")
    assert not layer.is_displayed()
    # the stage's own picture, zoomed to its loop, renders with its loop drawn
    loop_svg = driver.find_element(By.ID, "loop-view-0")
    assert loop_svg.size["width"] > 250 and loop_svg.size["height"] > 150
    assert loop_svg.find_element(By.CSS_SELECTOR, "polygon.loop-area").is_displayed()
    heat = loop_svg.find_elements(By.CSS_SELECTOR, "g.heat-0")
    assert len(heat) == (1 if variant == "tidy" else 0)
    if heat:                                  # the current map hides with its toggle
        assert heat[0].is_displayed()
        toggle = driver.find_element(By.CSS_SELECTOR, 'label[for="zh-0-0"]')
        driver.execute_script("arguments[0].scrollIntoView()", toggle)
        toggle.click()
        assert not heat[0].is_displayed()


@pytest.mark.browser
def test_demo_report_renders_with_a_marker_per_finding(driver, tmp_path):
    """The sprawling demo board, through the whole pipeline, in Chromium."""
    from selenium.webdriver.common.by import By

    board = Path(__file__).resolve().parents[1] / "boards" / "led-driver-sprawl"
    if not (board / "loopcheck.toml").exists():
        pytest.skip("demo board boards/led-driver-sprawl not made yet")
    from loopcheck.commands import check_cmd
    from reportfixtures import cached_analyse

    check_cmd_analyse = check_cmd._analyse
    check_cmd._analyse = cached_analyse
    try:
        result = check_cmd.run_check(str(board), None, "error", check_cmd.Progress(False))
    finally:
        check_cmd._analyse = check_cmd_analyse
    page = tmp_path / "demo.html"
    page.write_text(render_html(result), encoding="utf-8")
    assert page.stat().st_size < 3_000_000
    driver.get(page.as_uri())
    assert [x for x in driver.get_log("browser") if x.get("level") in ("SEVERE", "WARNING")] == []
    assert driver.execute_script(
        "return document.documentElement.scrollWidth <= document.documentElement.clientWidth")
    svg = driver.find_element(By.ID, "board-view")
    assert svg.find_elements(By.CSS_SELECTOR, "polygon.hot-loop")
    markers = svg.find_elements(By.CSS_SELECTOR, ".finding-marker")
    assert len(markers) == len(result.findings) > 0
    # one zoomed picture per stage with a measured loop, each with its loop path drawn
    pictures = driver.find_elements(By.CSS_SELECTOR, "svg.loop-svg")
    assert len(pictures) == len(result.analysis.stages) > 0
    for pic in pictures:
        assert pic.size["width"] > 250
        assert pic.find_elements(By.CSS_SELECTOR, "polyline.loop-path")
    rules = {f.rule for f in result.findings}
    assert {"hot-loop-area", "input-cap-distance", "sense-kelvin"} <= rules
    # each marker's link lands on its row in the findings table
    first = markers[0]
    fid = first.get_attribute("data-finding")
    assert driver.find_element(By.ID, fid).tag_name == "tr"


@pytest.mark.browser
def test_diff_html_renders_in_chromium(driver, tmp_path):
    from selenium.webdriver.common.by import By

    from loopcheck.compare import compare
    from loopcheck.report.diff import DiffResult, render_diff_html

    a, b = make_result("tidy"), make_result("sprawl")
    d = DiffResult(a, b, compare(a.analysis.measurements, b.analysis.measurements,
                                 a.findings, b.findings))
    page = tmp_path / "diff.html"
    page.write_text(render_diff_html(d), encoding="utf-8")
    driver.get(page.as_uri())
    assert [x for x in driver.get_log("browser") if x.get("level") in ("SEVERE", "WARNING")] == []
    for side in ("board-old", "board-new"):
        assert driver.find_element(By.ID, side).find_elements(By.CSS_SELECTOR, "polygon.hot-loop")
