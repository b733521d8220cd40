"""Every shipped demo study's report in headless Chromium at 1400 px: the front has points,
no table overflows its box, no two axis titles overlap, no console error.

The sampled demos run with fewer samples than shipped (the report's layout, not the
number of cases, is under test); the grid demos run as shipped.
"""

from __future__ import annotations

import os
import tomllib
from pathlib import Path

import pytest

from sizing.study.runner import run_study
from sizing.study.spec import study_from_dict
from test_study_report_html import CHROMIUM, _open

ROOT = Path(__file__).resolve().parents[2]
#: demo -> samples used here (None: as shipped)
DEMOS = {"jackdaw_quick": None, "heron_sobol": 16, "jackdaw_limits_lhs": 10, "heron_apogee_trade": None}

_GEOMETRY = """() => {
  const out = {overflow: [], overlap: [], front: 0};
  document.querySelectorAll("table").forEach((t) => {
    const box = t.closest(".box") || t.parentElement;
    const sec = t.closest("section").getBoundingClientRect();
    const r = t.getBoundingClientRect();
    if (t.scrollWidth > box.clientWidth + 1 || r.right > sec.right + 1) out.overflow.push(t.id);
    t.querySelectorAll("td, th").forEach((c) => {
      if (c.scrollWidth > c.clientWidth + 1) out.overflow.push(t.id + ": " + c.textContent);
    });
  });
  const titles = Array.from(document.querySelectorAll("#plot-parcoords .axis-title, #plot-parcoords .annotation-text"))
    .filter((e) => e.textContent.trim()).map((e) => [e.textContent, e.getBoundingClientRect()]);
  for (let i = 0; i < titles.length; i++) for (let j = i + 1; j < titles.length; j++) {
    const a = titles[i][1], b = titles[j][1];
    if (a.left < b.right - 1 && b.left < a.right - 1 && a.top < b.bottom - 1 && b.top < a.bottom - 1)
      out.overlap.push(titles[i][0] + " / " + titles[j][0]);
  }
  const fr = document.getElementById("plot-front").data[1];
  out.front = fr.x.filter((v, i) => v !== null && fr.y[i] !== null).length;
  out.points = document.querySelectorAll("#plot-front .scatterlayer .trace:nth-child(2) .point").length;
  out.dims = document.getElementById("plot-parcoords").data[0].dimensions
    ? document.getElementById("plot-parcoords").data[0].dimensions.map((d) => d.label) : [];
  return out;
}"""


@pytest.fixture(scope="module")
def demo_reports(tmp_path_factory) -> dict[str, Path]:
    out = {}
    for name, samples in DEMOS.items():
        path = ROOT / "studies" / f"{name}.toml"
        data = tomllib.loads(path.read_text(encoding="utf-8"))
        if samples is not None:
            data["study"]["samples"] = samples
        folder = tmp_path_factory.mktemp(name)
        summary = run_study(study_from_dict(data, source=str(path), base_dir=path.parent), folder, workers=2)
        assert summary.n_ok > 0, name
        out[name] = folder
    return out


def test_demo_cases_csv_holds_si_numbers(demo_reports):
    """Axis values written with units in a study file are SI numbers in cases.csv."""
    import pandas as pd

    for name, folder in demo_reports.items():
        cases = pd.read_csv(folder / "cases.csv")
        for col in cases.columns:
            if col.endswith("]") and col not in ("message",):
                assert pd.api.types.is_numeric_dtype(cases[col]), (name, col)


@pytest.mark.browser
@pytest.mark.parametrize("name", list(DEMOS))
def test_demo_report_readable_at_1400_px(demo_reports, name):
    if not os.path.exists(CHROMIUM):
        pytest.skip("Debian chromium is not installed at /usr/bin/chromium")
    sync_api = pytest.importorskip("playwright.sync_api")
    problems: list[str] = []
    with sync_api.sync_playwright() as p:
        browser, page = _open(p, demo_reports[name] / "report.html", problems, width=1400)
        try:
            g = page.evaluate(_GEOMETRY)
            assert g["front"] > 0 and g["points"] > 0, g
            assert g["overflow"] == [], g["overflow"]
            assert g["overlap"] == [], g["overlap"]
            assert not any("_" in d and "[" not in d for d in g["dims"]), g["dims"]  # words, not keys
            text = page.text_content("main")
            assert "n/a" not in page.text_content("#pareto-table thead")
            assert "gross_mass_kg" not in text and "bound[" not in text
            if name == "heron_sobol":  # the requirement is a one-level axis: stated, not drawn
                assert "payload (requirement): 4.5 kg" in page.text_content("#fixed")
                assert not any(d.startswith("payload") for d in g["dims"])
                assert page.locator("#pairs-section .plot .scatterlayer").count() == 3
            if name == "jackdaw_limits_lhs":  # a per-stage metric as an objective
                ys = page.evaluate("document.getElementById('plot-front').data[1].y")
                assert all(isinstance(y, (int, float)) for y in ys) and len(set(ys)) > 1
        finally:
            browser.close()
    assert problems == []
