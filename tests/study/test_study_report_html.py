"""The HTML study report in headless Chromium: no console errors, plots drawn,
table present, a design selectable, hostile names shown as text."""

from __future__ import annotations

import copy
import os
from pathlib import Path

import pytest

from sizing.report.html import _json_for_script
from sizing.study.runner import run_study
from sizing.study.spec import study_from_dict
from study_helpers import small_study

CHROMIUM = "/usr/bin/chromium"
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--no-first-run", "--disable-sync"]
EVIL_VEHICLE = '<img src=x onerror="window.__xss=1">Magpie'
EVIL_TITLE = "</script><script>window.__xss=2</script>"
EVIL_STAGE = '<svg onload="window.__xss=3">upper'


def test_json_for_script_cannot_close_the_script():
    text = _json_for_script({"a": "</script><b>&"})
    assert "<" not in text and ">" not in text and "&" not in text


@pytest.fixture(scope="module")
def report(tmp_path_factory) -> Path:
    data = small_study()
    data["study"].update(name=EVIL_TITLE, vehicle=EVIL_VEHICLE)
    data["base"] = copy.deepcopy(data["base"])
    data["base"]["stage"][2]["name"] = EVIL_STAGE
    data["propellants"] = {"<b>bold</b>": {"isp": 300.0, "structural_coefficient": 0.2},
                           "plain": {"isp": 320.0, "structural_coefficient": 0.2}}
    data["choices"] = {"propellant": {EVIL_STAGE: ["<b>bold</b>", "plain"]}, "stage_count": [2, 3]}
    out = tmp_path_factory.mktemp("html")
    summary = run_study(study_from_dict(data), out, engine="serial")
    assert summary.n_ok > 0
    return out / "report.html"


def test_report_is_self_contained(report):
    text = report.read_text(encoding="utf-8")
    assert "cdn." not in text.split("<script>", 1)[0]
    assert 'src="http' not in text and "src='http" not in text
    assert "Preliminary estimates only" in text
    assert EVIL_TITLE not in text and EVIL_VEHICLE not in text


#: Makes every WebGL context request fail, as in a browser with WebGL disabled.
NO_WEBGL = """(function () { var g = HTMLCanvasElement.prototype.getContext;
  HTMLCanvasElement.prototype.getContext = function (t) {
    return /webgl/i.test(String(t)) ? null : g.apply(this, arguments); }; })();"""


def _open(p, report, problems, *, webgl=True, width=1400):
    browser = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
    page = browser.new_page(viewport={"width": width, "height": 900})
    if not webgl:
        page.add_init_script(NO_WEBGL)
    page.on("console", lambda m: problems.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: problems.append(str(e)))
    page.goto(report.as_uri())
    page.wait_for_selector('body[data-drawn="1"]', timeout=60000, state="attached")
    return browser, page


@pytest.mark.browser
def test_report_plots_readable_in_headless_chromium(report):
    """Integer axes ticked at whole numbers; structure and propellant legend swatches
    differ; the tallest bar has headroom below the toolbar; no WebGL -> SVG fallback."""
    if not os.path.exists(CHROMIUM):
        pytest.skip("Debian chromium is not installed at /usr/bin/chromium")
    sync_api = pytest.importorskip("playwright.sync_api")
    problems: list[str] = []
    with sync_api.sync_playwright() as p:
        browser, page = _open(p, report, problems)
        try:
            assert page.get_attribute("body", "data-parcoords") == "webgl"
            dims = page.evaluate("document.getElementById('plot-parcoords').data[0].dimensions"
                                 ".map(function (d) { return [d.label, d.tickvals || null]; })")
            (ticks,) = [t for label, t in dims if label.startswith("stage count [-]")]
            assert ticks == [2, 3]
            bars = page.evaluate("document.getElementById('plot-stack').data.map(function (t) {"
                                 " return [t.name, t.marker.color, (t.marker.pattern || {}).shape || ''];})")
            swatches = {name: (color, shape) for name, color, shape in bars}
            for name, (color, shape) in swatches.items():
                if name.endswith(" structure"):
                    prop = swatches[name[: -len(" structure")] + " propellant"]
                    assert (color, shape) != prop and shape
            assert page.locator("#plot-stack .legend .legendpoints path[style*='url(']").count() > 0
            top, gross = page.evaluate(
                "[document.getElementById('plot-stack').layout.yaxis.range[1], Math.max.apply(null,"
                " document.getElementById('plot-stack').data[0].x.map(function (_, i) { return"
                " document.getElementById('plot-stack').data.reduce(function (s, t) { return s + t.y[i]; }, 0); }))]")
            assert top >= 1.1 * gross
            for div in ("#plot-stack", "#plot-front", "#plot-budget"):
                bar = page.locator(f"{div} .modebar").bounding_box()
                area = page.locator(f"{div} .nsewdrag").first.bounding_box()
                assert bar["y"] + bar["height"] <= area["y"] + 1, div
        finally:
            browser.close()
        browser, page = _open(p, report, problems, webgl=False)
        try:
            assert page.get_attribute("body", "data-parcoords") == "svg"
            assert page.locator("#plot-parcoords .scatterlayer .trace").count() == 2
            assert "no WebGL" in page.text_content("#parcoords-note")
        finally:
            browser.close()
    assert problems == []


@pytest.mark.browser
def test_report_in_headless_chromium(report):
    if not os.path.exists(CHROMIUM):
        pytest.skip("Debian chromium is not installed at /usr/bin/chromium")
    sync_api = pytest.importorskip("playwright.sync_api")
    problems: list[str] = []
    with sync_api.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        try:
            page = browser.new_page()
            page.on("console", lambda m: problems.append(m.text) if m.type == "error" else None)
            page.on("pageerror", lambda e: problems.append(str(e)))
            page.on("request", lambda r: problems.append(f"network: {r.url}")
                    if not r.url.startswith(("file:", "data:", "blob:")) else None)
            page.goto(report.as_uri())
            page.wait_for_selector('body[data-drawn="1"]', timeout=60000, state="attached")
            assert page.evaluate("window.__xss") is None
            assert page.text_content("#title") == EVIL_TITLE
            assert EVIL_VEHICLE in page.text_content("#vehicle")
            assert "Preliminary estimates only" in page.text_content("#caution")
            # plots drawn
            assert page.locator("#plot-front .scatterlayer .point").count() > 0
            assert page.locator("#plot-stack .bars path").count() > 0
            assert page.locator("#plot-budget .bars path, #plot-budget .point").count() > 0
            assert page.locator("#plot-parcoords .parcoords").count() > 0
            # table of Pareto designs; pick the last one
            rows = page.locator("#pareto-table tbody tr")
            n = rows.count()
            assert n >= 2
            last = rows.nth(n - 1)
            cid = last.get_attribute("data-case-id")
            last.click()
            assert page.get_attribute("body", "data-selected") == cid
            assert "picked" in (last.get_attribute("class") or "")
            stage_cells = page.locator("#stage-table tbody td:first-child").all_text_contents()
            assert EVIL_STAGE in stage_cells
            assert page.locator("#pareto-table b, #stage-table b, #stage-table svg").count() == 0
            assert page.evaluate("window.__xss") is None
        finally:
            browser.close()
    assert problems == []
