"""`sizing disperse` and `sizing solve` with a required probability, through `main(argv)` as a user runs them."""

from __future__ import annotations

import json
import re
import sys
import tomllib
from pathlib import Path

import pytest

from sizing.cli import main
from sizing.result import CAUTION

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE / "dispersion"))
from dispersion_helpers import HERON, HERON_TABLE, ROOT, write_table  # noqa: E402


def test_disperse_writes_every_output_with_units_and_the_caution(tmp_path, capsys):
    out = tmp_path / "run"
    table = write_table(tmp_path)
    assert main(["disperse", str(HERON), "--dispersions", str(table), "--samples", "60", "--out", str(out),
                 "--engine", "serial", "--quiet"]) == 0
    text = capsys.readouterr().out
    assert "probability of meeting it" in text and "Flight performance reserve [m]" in text
    assert CAUTION in text.replace("\n", " ")
    lines = (out / "samples.csv").read_text().splitlines()
    assert lines[0] == f"# caution: {CAUTION} (read with pandas.read_csv(path, comment='#'))"
    head = lines[1].split(",")
    assert head[:3] == ["sample_id", "status", "boost.isp [s]"] and "wind.speed [m/s]" in head
    assert "apogee_above_site_m" in head and "target_margin_m" in head and len(lines) == 62
    stats = (out / "statistics.csv").read_text()
    assert stats.rstrip().endswith(f'caution,"{CAUTION}"') and "order statistic [m]" in stats
    js = json.loads((out / "statistics.json").read_text())
    assert js["caution"] == CAUTION and js["samples"]["n"] == 60
    page = (out / "report.html").read_text()
    assert page.index(CAUTION) < page.index("<h2>Summary") and "<script src=" not in page
    assert CAUTION in (out / "CAUTION.txt").read_text()
    # `sizing report FOLDER` rebuilds a dispersion folder's files from the stored samples
    before = (out / "statistics.json").read_text()
    (out / "report.html").unlink()
    assert main(["report", str(out)]) == 0
    assert (out / "report.html").exists() and (out / "statistics.json").read_text() == before


def test_disperse_exit_1_when_the_probability_is_not_demonstrated(tmp_path, capsys):
    table = write_table(tmp_path)
    assert main(["disperse", str(HERON), "--dispersions", str(table), "--samples", "40", "--out",
                 str(tmp_path / "r"), "--engine", "serial", "--quiet", "--probability", "0.999", "--json"]) == 1
    js = json.loads(capsys.readouterr().out)
    assert js["requirement_demonstrated"] is False and js["probability_required"] == 0.999
    req = js["reserve_required"]
    assert req["enough_samples"] is False and req["samples_needed_no_failure"] == 2302


def _no_table(tmp_path):
    p = tmp_path / "d.toml"
    p.write_text(HERON.read_text())
    return p


@pytest.mark.parametrize("argv,message", [
    (["--samples", "0"], "--samples: must be >= 1. Got 0."),
    (["--probability", "1.5"], "--probability: must be in (0, 1). Got 1.5."),
    (["--engine", "local", "--scheduler", "tcp://127.0.0.1:1"],
     "--scheduler: only used with --engine dask. Got --engine local."),
])
def test_disperse_bad_options_exit_2_in_one_line(tmp_path, capsys, argv, message):
    assert main(["disperse", str(HERON), "--out", str(tmp_path / "x")] + argv) == 2
    assert capsys.readouterr().err.strip() == f"error: {message}"


def test_disperse_bad_files_exit_2_in_one_line(tmp_path, capsys):
    from sizing.dispersion.case import MSG_NO_DISPERSIONS, MSG_WATER

    p = _no_table(tmp_path)
    assert main(["disperse", str(p), "--out", str(tmp_path / "x"), "--quiet"]) == 2
    assert capsys.readouterr().err.strip() == f"error: {p}: {MSG_NO_DISPERSIONS}."
    water = ROOT / "problems" / "hobby_water_rocket.toml"
    table = write_table(tmp_path, "[dispersions]\n[[dispersions.input]]\nquantity = \"payload_mass\"\n"
                                  "distribution = \"uniform\"\nhalf_width = \"5 %\"\n")
    assert main(["disperse", str(water), "--dispersions", str(table), "--out", str(tmp_path / "w"), "--quiet"]) == 2
    assert capsys.readouterr().err.strip() == f"error: {water}: hobby.kind: {MSG_WATER}. Got 'water'."
    assert main(["disperse", str(HERON), "--dispersions", str(p), "--out", str(tmp_path / "y"), "--quiet"]) == 2
    assert capsys.readouterr().err.strip() == f"error: {p}: has no [dispersions] table."


BAD_QUANTITY = '[dispersions]\n[[dispersions.input]]\nquantity = "*.ispp"\ndistribution = "normal"\nsigma = "1 %"\n'


def _err_lines(capsys) -> list[str]:
    cap = capsys.readouterr()
    assert "Traceback" not in cap.err + cap.out
    return cap.err.splitlines()


@pytest.mark.parametrize("design", [HERON, ROOT / "problems" / "hobby_motor_two_stage.toml"],
                         ids=["design", "hobby"])
def test_disperse_bad_table_names_the_dispersions_file(tmp_path, capsys, design):
    """The faulty table came from --dispersions FILE: the one line names that file, not the design."""
    from sizing.problem.dispersions import MSG_UNKNOWN_QUANTITY

    table = write_table(tmp_path, BAD_QUANTITY, "d1.toml")
    assert main(["disperse", str(design), "--dispersions", str(table), "--out", str(tmp_path / "x"),
                 "--quiet"]) == 2
    err = _err_lines(capsys)
    assert len(err) == 1, err
    assert err[0].startswith(f"error: {table}: dispersions.input[1] (*.ispp).quantity: {MSG_UNKNOWN_QUANTITY}. "
                             f"Got '*.ispp'. Allowed: ")
    assert str(design) not in err[0]


def test_disperse_unitless_spread_names_the_dispersions_file(tmp_path, capsys):
    from sizing.units import MSG_NO_UNIT

    table = write_table(tmp_path, HERON_TABLE.replace('low = "4.4 kg"', 'low = "4.4"'), "d1.toml")
    assert main(["disperse", str(HERON), "--dispersions", str(table), "--out", str(tmp_path / "x"), "--quiet"]) == 2
    assert _err_lines(capsys) == [
        f"error: {table}: dispersions.input[4] (payload_mass).low: "
        + MSG_NO_UNIT.format(value="4.4", plain="SI", unit="kg", example="12 kg")]


def test_disperse_faults_in_both_files_each_name_their_file(tmp_path, capsys):
    """A fault of the design and one of the --dispersions table: one line each, each naming its own file."""
    design = tmp_path / "design.toml"
    text = HERON.read_text()
    assert "payload_mass = 4.5\n" in text
    design.write_text(text.replace("payload_mass = 4.5\n", "payload_mass = -4.5\n", 1))
    table = write_table(tmp_path, BAD_QUANTITY, "d1.toml")
    assert main(["disperse", str(design), "--dispersions", str(table), "--out", str(tmp_path / "x"),
                 "--quiet"]) == 2
    err = _err_lines(capsys)
    assert len(err) == 2, err
    assert err[0] == f"error: {design}: mission.payload_mass: must be > 0. Got -4.5."
    assert err[1].startswith(f"error: {table}: dispersions.input[1] (*.ispp).quantity: ")


def test_disperse_into_another_runs_folder_needs_restart(tmp_path, capsys):
    out = tmp_path / "r"
    a = write_table(tmp_path)
    b = write_table(tmp_path, (tmp_path / "table.toml").read_text().replace("seed = 5", "seed = 6"), "b.toml")
    base = ["disperse", str(HERON), "--samples", "8", "--out", str(out), "--engine", "serial", "--quiet"]
    assert main(base + ["--dispersions", str(a)]) == 0
    capsys.readouterr()
    assert main(base + ["--dispersions", str(b)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "holds samples of a different design, [dispersions] table or seed" in err[0]
    assert main(base + ["--dispersions", str(b), "--restart"]) == 0


def test_solve_to_a_probability_then_disperse_the_design(tmp_path, capsys):
    """The user path: size Heron II for 99 % of flights (order statistics at 50 % confidence, 300 samples
    to keep the test short), write the design file, fly it, disperse it with the same samples."""
    text = (ROOT / "problems" / "heron_confidence.toml").read_text()
    text = text.replace("samples = 2000", "samples = 300").replace("confidence = 0.90", "confidence = 0.5")
    prob = tmp_path / "heron.toml"
    prob.write_text(text)
    design = tmp_path / "design.toml"
    assert main(["solve", str(prob), "--out", str(design), "--json"]) == 0
    res = json.loads(capsys.readouterr().out)
    conf = res["flight"]["confidence"] if "flight" in res else res["confidence"]
    assert conf["demonstrated"] and conf["probability_required"] == 0.99 and len(conf["rounds"]) >= 2
    assert conf["reserve_m"] > 1000 and conf["rounds"][0]["sizing_target"] == 30000.0
    d = tomllib.loads(design.read_text())
    assert d["mission"]["apogee"] == 30000.0 and d["dispersions"]["samples"] == 300
    assert d["dispersions"]["input"][0]["quantity"] == "*.isp"
    assert main(["fly", str(design)]) == 0
    capsys.readouterr()
    assert main(["disperse", str(design), "--out", str(tmp_path / "run"), "--engine", "serial", "--quiet",
                 "--json"]) == 0
    js = json.loads(capsys.readouterr().out)
    assert js["requirement_demonstrated"] is True
    assert js["probability_of_meeting"]["met"] == conf["met"]  # the same 300 samples of the same design
    assert js["reserve_required"]["covered_by_nominal_margin"] is True


def test_solve_to_a_probability_prints_its_rounds(tmp_path, capsys):
    text = (ROOT / "problems" / "heron_confidence.toml").read_text()
    text = text.replace("samples = 2000", "samples = 100").replace("confidence = 0.90", "confidence = 0.5")
    text = text.replace("probability = 0.99 ", "probability = 0.95 ")
    prob = tmp_path / "h.toml"
    prob.write_text(text)
    assert main(["solve", str(prob)]) == 0
    out = capsys.readouterr().out
    assert re.search(r"Sizing to probability 0\.95 at 50% confidence \(100 dispersed flights per round", out)
    assert "meets probability 0.95" in out.replace("\n", " ")


def test_solve_with_a_table_but_no_probability_carries_the_table(tmp_path, capsys):
    text = (ROOT / "problems" / "heron_confidence.toml").read_text().replace("probability = 0.99 ", "")
    prob = tmp_path / "h.toml"
    prob.write_text(text)
    design = tmp_path / "d.toml"
    assert main(["solve", str(prob), "--out", str(design)]) == 0
    d = tomllib.loads(design.read_text())
    assert "probability" not in d["dispersions"] and len(d["dispersions"]["input"]) == 7
    assert "Sizing to probability" not in capsys.readouterr().out
