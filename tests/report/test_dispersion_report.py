"""The dispersion report: self-contained, caution first, user names shown as text; drawn in Chromium."""

from __future__ import annotations

import os
import re
import sys
from pathlib import Path

import pytest

from sizing.result import CAUTION

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "dispersion"))
from dispersion_helpers import HERON, HERON_TABLE, ROOT  # noqa: E402

EVIL = "<img src=x onerror=window.__xss=1>"
CHROMIUM = "/usr/bin/chromium"


@pytest.fixture(scope="module")
def report(tmp_path_factory) -> Path:
    from sizing.dispersion.case import case_from_file
    from sizing.dispersion.run import run_dispersion

    tmp = tmp_path_factory.mktemp("rep")
    design = tmp / "design.toml"
    design.write_text(HERON.read_text().replace('"sustain"', f'"{EVIL}"'))
    table = tmp / "table.toml"
    table.write_text(HERON_TABLE.replace("sustain.isp", f"{EVIL}.isp"))
    s = run_dispersion(case_from_file(design, dispersions=table), tmp / "run", samples=80, engine="serial")
    return s.outputs["report"]


def test_dispersion_report_is_offline_with_caution_first_and_names_escaped(report):
    page = report.read_text()
    assert not re.search(r"<script[^>]*\bsrc=", page)  # plotly.js inlined: no network needed
    assert page.index(CAUTION) < page.index("<h2>Summary")
    assert EVIL not in page  # entity-escaped in tables, titles and plot labels
    assert page.count("plotly-graph-div") >= 4


@pytest.mark.browser
@pytest.mark.skipif(not os.path.exists(CHROMIUM), reason="needs Chromium")
def test_dispersion_report_draws_without_errors_in_chromium(report):
    sync_api = pytest.importorskip("playwright.sync_api")
    errors: list[str] = []
    with sync_api.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=["--headless", "--no-sandbox", "--disable-gpu"])
        page = browser.new_page()
        page.on("pageerror", lambda e: errors.append(str(e)))
        page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
        page.goto(report.as_uri())
        page.wait_for_selector(".plotly-graph-div .main-svg")
        n_plots = page.eval_on_selector_all(".plotly-graph-div", "els => els.filter(e => e._fullLayout).length")
        xss = page.evaluate("window.__xss === undefined")
        browser.close()
    assert not errors, errors
    assert n_plots >= 4 and xss
