"""`sizing study` / `sizing report` through main(argv): exit codes and one-line errors."""

from __future__ import annotations

from pathlib import Path

import pytest

from sizing.cli import main

ROOT = Path(__file__).resolve().parents[2]

_STUDY = """
[study]
name = "cli study"

[base.mission]
payload_mass = 5000.0
delta_v = {dv}
standard_gravity = 9.81

[[base.stage]]
name = "first"
isp = 400.0
structural_coefficient = 0.10

[[base.stage]]
name = "second"
isp = 350.0
structural_coefficient = 0.15

[[axis]]
field = "mission.payload_mass"
values = [4000.0, 5000.0]

[[objective]]
metric = "gross_mass_kg"

[[objective]]
metric = "payload_mass_kg"
"""


def _write(tmp_path, dv="9000.0", extra=""):
    p = tmp_path / "s.toml"
    p.write_text(_STUDY.format(dv=dv) + extra)
    return p


def test_cli_study_ok_then_resume(tmp_path, capsys):
    p = _write(tmp_path)
    out = tmp_path / "run"
    assert main(["study", str(p), "--out", str(out), "--quiet", "--workers", "1"]) == 0
    assert (out / "report.html").exists() and (out / "pareto.csv").exists()
    text = capsys.readouterr().out
    assert "Preliminary estimates only" in text
    assert main(["study", str(p), "--out", str(out), "--quiet", "--engine", "serial"]) == 0
    assert "already stored (resumed)" in capsys.readouterr().out
    assert main(["report", str(out)]) == 0
    assert main(["report", str(out), "--case", "0"]) == 0
    assert (out / "review" / "case-0" / "review.md").exists()


def test_cli_study_nothing_feasible_exit_1(tmp_path, capsys):
    """Two stages cannot reach 20 km/s: sum c ln(1/eps) = 15.5 km/s, the zero-payload limit of the
    Tsiolkovsky rocket equation per stage (Curtis, Orbital Mechanics for Engineering Students,
    3rd ed., Sec. 11.6; section number from memory), computed."""
    p = _write(tmp_path, dv="20000.0")
    assert main(["study", str(p), "--out", str(tmp_path / "r"), "--quiet", "--engine", "serial"]) == 1
    err = capsys.readouterr().err
    assert "no feasible design" in err and "Traceback" not in err


def test_cli_study_bad_input_exit_2(tmp_path, capsys):
    p = _write(tmp_path, extra='\n[constraints]\nmax_gros_mass = 5.0\n')
    assert main(["study", str(p), "--quiet"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1
    assert err[0].startswith(f"error: {p}: constraints.max_gros_mass: unknown key. Did you mean 'max_gross_mass'?")


def test_cli_study_changed_file_exit_2_and_restart(tmp_path, capsys):
    p = _write(tmp_path)
    out = tmp_path / "run"
    assert main(["study", str(p), "--out", str(out), "--quiet", "--engine", "serial"]) == 0
    p.write_text(_STUDY.format(dv="9100.0"))
    assert main(["study", str(p), "--out", str(out), "--quiet", "--engine", "serial"]) == 2
    err = capsys.readouterr().err
    assert "holds results of a different study file" in err and "--restart" in err
    assert main(["study", str(p), "--out", str(out), "--quiet", "--engine", "serial", "--restart"]) == 0


def test_cli_study_bad_first_case_then_fixed_file_same_folder(tmp_path, capsys):
    """Exit 2 for a first case the problem rejects; the folder stays free, so the fixed
    file runs into it without --restart."""
    p = _write(tmp_path)
    p.write_text(p.read_text().replace("values = [4000.0, 5000.0]",
                                       "start = -120.0\nstop = 240.0\nnum = 4"))
    out = tmp_path / "run"
    assert main(["study", str(p), "--out", str(out), "--quiet", "--engine", "serial"]) == 2
    err = capsys.readouterr().err
    assert "payload_mass" in err and "Traceback" not in err
    assert not (out / "study.sqlite").exists()
    p.write_text(p.read_text().replace("start = -120.0", "start = 120.0"))
    assert main(["study", str(p), "--out", str(out), "--quiet", "--engine", "serial"]) == 0


@pytest.mark.parametrize("argv, msg", [
    (["--engine", "local", "--scheduler", "tcp://127.0.0.1:1"], "--scheduler: only used with --engine dask"),
    (["--workers", "0"], "--workers: must be >= 1"),
])
def test_cli_study_bad_options(tmp_path, capsys, argv, msg):
    p = _write(tmp_path)
    assert main(["study", str(p), "--quiet", *argv]) == 2
    assert msg in capsys.readouterr().err


def test_cli_report_missing_folder(tmp_path, capsys):
    assert main(["report", str(tmp_path / "nothing")]) == 2
    assert "has no study.sqlite" in capsys.readouterr().err


def test_demo_quick_study_runs(tmp_path):
    """The shipped quick demo study loads and runs (invented scenario, seconds)."""
    out = tmp_path / "demo"
    assert main(["study", str(ROOT / "studies" / "jackdaw_quick.toml"), "--out", str(out),
                 "--quiet", "--no-report"]) == 0
