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
    data["choices"] = {"propellant": {EVIL_STAGE: ["<b>bold</b>", "plain"]}}
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
            page.wait_for_selector('body[data-ready="1"]', timeout=30000)
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
