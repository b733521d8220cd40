"""Command line through `main(argv)`: exit codes 0 ok / 1 no solution / 2 bad input, no tracebacks."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from sizing.cli import EXIT_BAD_INPUT, EXIT_FAILED, EXIT_OK, main

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "problems" / "jackdaw_three_stage.toml"


def test_cli_solve_prints_table_with_units(capsys):
    assert main(["solve", str(DEMO)]) == EXIT_OK
    out = capsys.readouterr().out
    for text in ("ignition mass [kg]", "propellant mass [kg]", "structural mass [kg]", "mass ratio [-]",
                 "payload ratio [-]", "delta-v [m/s]", "Trade factors", "not flight clearance"):
        assert text in out


def test_cli_solve_json_has_contract_keys(capsys):
    assert main(["solve", str(DEMO), "--json"]) == EXIT_OK
    data = json.loads(capsys.readouterr().out)
    for key in ("gross_mass_kg", "payload_mass_kg", "delta_v_m_s", "stages"):
        assert key in data
    assert [s["name"] for s in data["stages"]] == ["first", "second", "kick"]
    for s in data["stages"]:
        for key in ("ignition_mass_kg", "propellant_mass_kg", "structural_mass_kg", "mass_ratio", "delta_v_m_s"):
            assert isinstance(s[key], float)


@pytest.mark.parametrize("ext", [".csv", ".md", ".json", ".xlsx"])
def test_cli_solve_out_writes_each_format(tmp_path, ext, capsys):
    out = tmp_path / f"mass{ext}"
    assert main(["solve", str(DEMO), "--out", str(out)]) == EXIT_OK
    assert out.exists() and out.stat().st_size > 100


def test_cli_solve_out_bad_extension_is_bad_input_before_solving(tmp_path, capsys):
    code = main(["solve", str(DEMO), "--out", str(tmp_path / "mass.pdf")])
    err = capsys.readouterr()
    assert code == EXIT_BAD_INPUT
    assert "extension must be one of" in err.err
    assert err.out == ""  # refused before any work


def test_cli_solve_out_missing_folder_names_out(tmp_path, capsys):
    code = main(["solve", str(DEMO), "--out", str(tmp_path / "nope" / "mass.csv")])
    assert code == EXIT_BAD_INPUT
    assert "--out" in capsys.readouterr().err


def test_cli_several_faults_each_line_names_the_file(tmp_path, capsys):
    p = tmp_path / "two.toml"
    p.write_text('[mission]\npayload_mass = -1\ndelta_v = 3000\n[[stage]]\nisp = 250\nstructural_coefficient = 1.5\n')
    assert main(["check", str(p)]) == EXIT_BAD_INPUT
    lines = capsys.readouterr().err.strip().splitlines()
    assert len(lines) == 2 and all(line.startswith(f"error: {p}: ") for line in lines)


def test_cli_check_ok(capsys):
    assert main(["check", str(DEMO)]) == EXIT_OK
    assert capsys.readouterr().out.startswith("ok:")


def test_cli_bad_input_exit_2_one_line_per_fault(tmp_path, capsys):
    p = tmp_path / "bad.toml"
    p.write_text('[mission]\npayload_mass = -1\ndelta_v = 3000\n[[stage]]\nisp = 250\nstructural_coefficient = 1.5\n')
    assert main(["solve", str(p)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert "mission.payload_mass: must be > 0. Got -1." in err
    assert "stage[1].structural_coefficient: must be in (0, 1). Got 1.5." in err


def test_cli_malformed_toml_exit_2(tmp_path, capsys):
    p = tmp_path / "broken.toml"
    p.write_text("[mission\n")
    assert main(["check", str(p)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert str(p) in err and "not valid TOML" in err and len(err.strip().splitlines()) == 1


def test_cli_missing_file_exit_2(tmp_path, capsys):
    assert main(["solve", str(tmp_path / "none.toml")]) == EXIT_BAD_INPUT
    assert "file not found" in capsys.readouterr().err


def test_cli_unreachable_target_exit_1_with_best_value(tmp_path, capsys):
    p = tmp_path / "far.toml"
    p.write_text('[mission]\npayload_mass = 10\ndelta_v = 9000\n[[stage]]\nexhaust_velocity = 3000\nstructural_coefficient = 0.1\n')
    assert main(["solve", str(p)]) == EXIT_FAILED
    out = capsys.readouterr().out
    assert "beyond the most these stages can deliver" in out and "6,907.76 m/s" in out


def test_cli_unreachable_target_json_exit_1(tmp_path, capsys):
    p = tmp_path / "far.toml"
    p.write_text('[mission]\npayload_mass = 10\ndelta_v = 9000\n[[stage]]\nexhaust_velocity = 3000\nstructural_coefficient = 0.1\n')
    assert main(["solve", str(p), "--json"]) == EXIT_FAILED
    data = json.loads(capsys.readouterr().out)
    assert data["success"] is False and data["status"] == "infeasible"
    assert data["best"]["max_delta_v_m_s"] == pytest.approx(6907.755, rel=1e-6)


def test_cli_python_m_sizing_runs():
    proc = subprocess.run([sys.executable, "-m", "sizing", "solve", str(DEMO), "--json"],
                          capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout)["gross_mass_kg"] > 0
