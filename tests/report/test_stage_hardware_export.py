"""Stage-model quantities reach every export, with units."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest

from sizing.cli import main
from sizing.optimize.api import solve
from sizing.problem.load import load_problem
from sizing.report.export import write_stage_table
from sizing.report.tables import hardware_table, result_markdown
from sizing.result import CAUTION

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture(scope="module")
def result():
    r = solve(load_problem(ROOT / "problems" / "corvid_upper_stage.toml"))
    assert r.success, r.message
    return r


def test_hardware_table_rows_have_units(result):
    header, rows = hardware_table(result)
    assert header == ["quantity [unit]", "booster", "upper"]
    labels = [r[0] for r in rows]
    for want in ("fuel tank volume [m^3]", "oxidiser tank length [m]", "stage length [m]", "engine count [-]",
                 "engine mass, all engines [kg]", "mass: tanks [kg]", "mass: avionics [kg]"):
        assert want in labels
    assert all("[" in lab for lab in labels if lab != "propellant")


def test_markdown_and_csv_carry_hardware_and_caution(result, tmp_path):
    md = result_markdown(result)
    assert "### Stage hardware (stage model)" in md and "fuel mass [kg]" in md and CAUTION in md
    p = write_stage_table(result, tmp_path / "t.csv")
    rows = list(csv.reader(p.open()))
    by = {r[0]: r[1:] for r in rows if r}
    assert by["engine count [-]"] == ["7", "1"]
    assert float(by["mass: tanks [kg]"][1]) == pytest.approx(result.stage("upper").mass_breakdown_kg["tanks"])
    assert by["caution"][0] == CAUTION


def test_xlsx_has_hardware_sheet(result, tmp_path):
    import pandas as pd

    p = write_stage_table(result, tmp_path / "t.xlsx")
    sheet = pd.read_excel(p, sheet_name="stage hardware")
    assert list(sheet.columns) == ["quantity [unit]", "booster", "upper"]
    assert "stage length [m]" in set(sheet["quantity [unit]"])


def test_json_and_frame_have_unit_suffixed_fields(result):
    d = result.to_dict()
    up = d["stages"][1]
    for key in ("fuel_volume_m3", "stage_length_m", "engine_mass_kg", "thrust_to_weight", "mass_breakdown_kg"):
        assert up[key] is not None
    json.dumps(d)
    frame = result.to_frame()
    assert "tanks_mass_kg" in frame.columns and "mass_breakdown_kg" not in frame.columns


def test_cli_solve_prints_hardware(capsys):
    assert main(["solve", str(ROOT / "problems" / "corvid_upper_stage.toml")]) == 0
    out = capsys.readouterr().out
    assert "Stage hardware" in out and "oxidiser tank length [m]" in out
