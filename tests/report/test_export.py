"""Stage tables written to disk read back with the same numbers and units in every header."""

from __future__ import annotations

import csv
import json

import pandas as pd
import pytest

from sizing import load_problem, solve
from sizing.report import result_markdown, write_stage_table
from sizing.result import CAUTION
from tests.test_cli import DEMO


@pytest.fixture(scope="module")
def result():
    return solve(load_problem(DEMO))


def test_write_stage_table_csv_round_trip(tmp_path, result):
    p = write_stage_table(result, tmp_path / "t.csv")
    rows = list(csv.reader(p.open()))
    header = rows[0]
    assert all("[" in h for h in header[1:]), header
    by_name = {r[0]: r for r in rows[1:4]}
    col = header.index("propellant mass [kg]")
    for s in result.stages:
        assert float(by_name[s.name][col]) == pytest.approx(s.propellant_mass_kg, rel=1e-12)
    assert any(CAUTION in c for r in rows for c in r)


def test_write_stage_table_xlsx_round_trip(tmp_path, result):
    p = write_stage_table(result, tmp_path / "t.xlsx")
    sheets = pd.read_excel(p, sheet_name=None)
    assert {"stage masses", "trade factors", "summary"} <= set(sheets)
    masses = sheets["stage masses"]
    assert masses["ignition mass [kg]"].iloc[0] == pytest.approx(result.gross_mass_kg, rel=1e-12)
    assert masses["stage"].iloc[-1] == "total"
    assert CAUTION in sheets["summary"]["value"].tolist()


def test_write_stage_table_json_is_to_dict(tmp_path, result):
    p = write_stage_table(result, tmp_path / "t.json")
    data = json.loads(p.read_text())
    assert data["gross_mass_kg"] == pytest.approx(result.gross_mass_kg)
    assert data["caution"] == CAUTION


def test_result_markdown_has_units_and_caution(result):
    md = result_markdown(result)
    assert "| stage | Isp [s] |" in md and CAUTION in md and "Trade factors" in md


def test_write_stage_table_rejects_unknown_extension(tmp_path, result):
    with pytest.raises(ValueError, match="extension must be one of"):
        write_stage_table(result, tmp_path / "t.docx")


def test_write_stage_table_csv_totals_are_plain_numbers(tmp_path, result):
    rows = list(csv.reader(write_stage_table(result, tmp_path / "t.csv").open()))
    total = next(r for r in rows if r and r[0] == "total")
    assert float(total[rows[0].index("ignition mass [kg]")]) == pytest.approx(result.gross_mass_kg, rel=1e-12)


def test_stage_table_keeps_small_masses_visible():
    """A 40 g payload and 120 g of propellant are not rounded to 0.0 kg."""
    from sizing.report.tables import _fmt

    assert _fmt(0.04, "mass") == "0.0400"
    assert _fmt(0.123, "mass") == "0.1230"
    assert _fmt(8108.24, "mass") == "8,108.2"
