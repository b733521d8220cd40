"""`sizing hobby` and `sizing solve` on hobby problem files, through `main(argv)`.

Exit codes 0 ok / 1 no stack or design reaches the target / 2 bad input; errors one line
each on stderr, no traceback; the hobby cautions are printed. Output checks only (the
physics is tested in tests/optimize/test_hobby_problem.py and tests/physics/).
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest

from sizing.cli import EXIT_BAD_INPUT, EXIT_FAILED, EXIT_OK, main
from sizing.optimize.hobby import HOBBY_CAUTION
from sizing.result import CAUTION
from sizing.physics.water import MSG_NO_LIFTOFF, MSG_PRESSURE_LIMIT, MSG_SAFETY_FACTOR, WATER_CAUTION

ROOT = Path(__file__).resolve().parents[1]
MOTOR_DEMO = ROOT / "problems" / "hobby_motor_two_stage.toml"
WATER_DEMO = ROOT / "problems" / "hobby_water_rocket.toml"

WATER_FAST = """
[hobby]
kind = "water"

[hobby.optimise]
vary = []

[mission]
name = "test bottle"
payload_mass = "50 g"

[launch]
rail_length = 1.0

[[stage]]
name = "bottle"
bottle_volume = "1.5 L"
dry_mass = "120 g"
diameter = "90 mm"
nozzle_diameter = "9 mm"
pressure = "5 bar"
fill_fraction = 0.33
rated_pressure = "10 bar"
"""


def _write(tmp_path, text, name="p.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def _contract(data):
    for key in ("gross_mass_kg", "payload_mass_kg", "delta_v_m_s", "stages", "apogee_m", "hobby", "warnings"):
        assert key in data, key
    for s in data["stages"]:
        for key in ("ignition_mass_kg", "propellant_mass_kg", "structural_mass_kg", "mass_ratio", "delta_v_m_s"):
            assert isinstance(s[key], float), key


def test_cli_hobby_motor_demo_prints_tables_units_and_caution(capsys):
    assert main(["hobby", str(MOTOR_DEMO)]) == EXIT_OK
    out = capsys.readouterr().out
    for text in ("Stage mass table", "ignition mass [kg]", "Chosen motors", "total impulse [N s]",
                 "impulse class", "motor loaded mass [g]", "Hobby limits", "rail-exit speed, 1.5 m rail",
                 "m/s^2", "apogee above launch site", "search: exhaustive branch and bound",
                 "caution:", HOBBY_CAUTION):
        assert text in out, text
    assert "Traceback" not in out


@pytest.mark.parametrize("which", ["motors", "water"])
def test_cli_hobby_prints_one_caution_block_at_the_end(tmp_path, capsys, which):
    """Project rule (binding): hobby outputs carry the caution -- preliminary estimates only; follow
    local law, the applicable safety code, range and aviation rules and licensed practice. It is
    printed once, after every table, and covers each element of the general caution."""
    path = MOTOR_DEMO if which == "motors" else _write(tmp_path, WATER_FAST)
    assert main(["hobby", str(path)]) == EXIT_OK
    lines = [ln for ln in capsys.readouterr().out.splitlines() if ln.strip()]
    assert sum("caution" in ln.lower() for ln in lines) == 1
    assert CAUTION not in "\n".join(lines)
    last = lines[-1]
    assert last.startswith("caution: ") and last.endswith(HOBBY_CAUTION if which == "motors" else WATER_CAUTION)
    for part in ("Preliminary estimates only", "not clearance to fly", "safety code", "local law",
                 "range and aviation rules", "licensed practice"):
        assert part in last, part


def test_cli_solve_hands_hobby_files_over_and_json_has_contract_keys(capsys):
    assert main(["solve", str(MOTOR_DEMO), "--json", "--method", "slsqp"]) == EXIT_OK
    data = json.loads(capsys.readouterr().out)
    _contract(data)
    assert [s["name"] for s in data["stages"]] == ["booster", "sustainer"]
    assert data["hobby"]["kind"] == "motors"
    for s in data["hobby"]["stages"]:
        for key in ("motor", "designation", "impulse_class", "total_impulse_n_s"):
            assert key in s
    assert HOBBY_CAUTION in data["warnings"]
    assert data["apogee_m"] >= data["target_apogee_m"] == 1500.0


def test_cli_hobby_json_matches_solve_json(capsys):
    assert main(["hobby", str(MOTOR_DEMO), "--json"]) == EXIT_OK
    a = json.loads(capsys.readouterr().out)
    assert main(["solve", str(MOTOR_DEMO), "--json"]) == EXIT_OK
    b = json.loads(capsys.readouterr().out)
    assert a == b


def test_cli_water_settings_table_and_caution(tmp_path, capsys):
    assert main(["solve", str(_write(tmp_path, WATER_FAST))]) == EXIT_OK
    out = capsys.readouterr().out
    for text in ("Water settings", "fill fraction [-]", "pressure [bar gauge]", "allowed = rated / factor [bar]",
                 "5.00 = 10 / 2", "nozzle diameter [mm]", "water [g]", WATER_CAUTION):
        assert text in out, text


def test_cli_water_demo_json(capsys):
    """The shipped water demo (optimises fill and nozzle; a few seconds)."""
    assert main(["hobby", str(WATER_DEMO), "--json"]) == EXIT_OK
    data = json.loads(capsys.readouterr().out)
    _contract(data)
    s = data["hobby"]["stages"][0]
    assert s["pressure_pa"] <= s["allowed_pressure_pa"] + 1e-6
    assert 0.1 <= s["fill_fraction"] <= 0.6 and 0.006 <= s["nozzle_diameter_m"] <= 0.021
    assert WATER_CAUTION in data["warnings"]


def test_cli_pressure_above_rating_is_refused_exit_2(tmp_path, capsys):
    p = _write(tmp_path, WATER_FAST.replace('pressure = "5 bar"', 'pressure = "7 bar"'))
    assert main(["hobby", str(p)]) == EXIT_BAD_INPUT
    cap = capsys.readouterr()
    assert cap.out == ""
    lines = cap.err.strip().splitlines()
    assert len(lines) == 1
    assert str(p) in lines[0] and "stage[1] (bottle).pressure" in lines[0]
    assert MSG_PRESSURE_LIMIT in lines[0] and "refuses" in lines[0] and "'7 bar'" in lines[0]
    assert "Traceback" not in cap.err


def test_cli_safety_factor_one_is_refused_exit_2(tmp_path, capsys):
    """Burst pressure >= 2 x maximum expected operating pressure: Spaceport America Cup design,
    test & evaluation guide, as quoted on a university rocket-team wiki (found; tabulated in the
    project's shared check values, sec. 6). 9 bar on a 10 bar bottle with factor 1 is refused."""
    text = WATER_FAST.replace('pressure = "5 bar"', 'pressure = "9 bar"').replace(
        'rated_pressure = "10 bar"', 'rated_pressure = "10 bar"\nsafety_factor = 1')
    p = _write(tmp_path, text)
    assert main(["hobby", str(p)]) == EXIT_BAD_INPUT
    cap = capsys.readouterr()
    assert cap.out == "" and "Traceback" not in cap.err
    lines = cap.err.strip().splitlines()
    assert lines == [f"error: {p}: stage[1] (bottle).safety_factor: {MSG_SAFETY_FACTOR}. Got 1."]


def test_cli_bad_inputs_exit_2_one_line_per_fault(tmp_path, capsys):
    text = (WATER_FAST.replace("fill_fraction = 0.33", "fill_fracton = 0.33")
            .replace('kind = "water"', 'kind = "water"\nobjective = "mass"'))
    p = _write(tmp_path, text)
    assert main(["solve", str(p)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert "Traceback" not in err
    lines = err.strip().splitlines()
    assert lines[0] == f"error: {p} has 3 errors"
    assert any("fill_fracton: unknown key. Did you mean 'fill_fraction'?" in ln for ln in lines)
    assert any("fill_fraction: required key is missing." in ln for ln in lines)
    assert any("hobby.objective" in ln for ln in lines)


@pytest.mark.parametrize("text, needle", [
    ("[hobby]\nkind = 'water'\n[[stage]\n", "is not valid TOML"),
    ("[mission]\npayload_mass = 1\n", "needs a [hobby] table"),
])
def test_cli_hobby_malformed_files_exit_2(tmp_path, capsys, text, needle):
    assert main(["hobby", str(_write(tmp_path, text))]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert needle in err and "Traceback" not in err


def test_cli_hobby_missing_file_exit_2(tmp_path, capsys):
    assert main(["hobby", str(tmp_path / "nope.toml")]) == EXIT_BAD_INPUT
    assert "file not found" in capsys.readouterr().err


def test_cli_unreachable_target_exit_1_with_best_apogee(tmp_path, capsys):
    text = MOTOR_DEMO.read_text(encoding="utf-8").replace('target_apogee = "1500 m"', 'target_apogee = "40 km"')
    text = text.replace('motors = "motors/demo_motors.toml"',
                        f'motors = "{(ROOT / "problems" / "motors" / "demo_motors.toml").as_posix()}"')
    p = _write(tmp_path, text)
    out_path = tmp_path / "t.csv"
    assert main(["hobby", str(p), "--out", str(out_path)]) == EXIT_FAILED
    cap = capsys.readouterr()
    assert "infeasible" in cap.out and "Best reachable apogee" in cap.out and "best reachable:" in cap.out
    assert HOBBY_CAUTION in cap.out
    assert "not written" in cap.err and not out_path.exists()
    assert main(["hobby", str(p), "--json"]) == EXIT_FAILED
    data = json.loads(capsys.readouterr().out)
    assert data["success"] is False and data["best"]["apogee_m"] < 40_000


def test_cli_water_target_out_of_reach_exit_1(tmp_path, capsys):
    p = _write(tmp_path, WATER_FAST.replace('kind = "water"', 'kind = "water"\ntarget_apogee = "1 km"'))
    assert main(["hobby", str(p)]) == EXIT_FAILED
    out = capsys.readouterr().out
    assert "falls short of the target apogee" in out and WATER_CAUTION in out


def test_cli_water_low_pressure_no_liftoff_exit_1(tmp_path, capsys):
    """The water demo at 5 psi gauge (the review's hanging input, with a smaller search): no
    fill/nozzle candidate clears the 1 m rail, so the command ends with exit 1 and one clear
    message instead of simulating each stalled candidate to the time limit."""
    text = (WATER_DEMO.read_text(encoding="utf-8").replace('pressure = "5 bar"                # gauge',
                                                          'pressure = "5 psi"                # gauge')
            .replace('fill_bounds = [0.1, 0.6]', 'fill_bounds = [0.1, 0.6]\nn_grid = 3\nmax_evaluations = 12'))
    assert 'pressure = "5 psi"' in text
    assert main(["hobby", str(_write(tmp_path, text))]) == EXIT_FAILED
    out = capsys.readouterr().out
    assert MSG_NO_LIFTOFF in out and "0.345 bar gauge" in out and ".." not in out
    assert WATER_CAUTION in out


@pytest.mark.parametrize("ext", [".csv", ".md", ".json", ".xlsx"])
def test_cli_hobby_out_writes_each_format(tmp_path, capsys, ext):
    out = tmp_path / f"stack{ext}"
    assert main(["hobby", str(_write(tmp_path, WATER_FAST)), "--out", str(out)]) == EXIT_OK
    assert out.exists() and out.stat().st_size > 0
    if ext == ".md":
        text = out.read_text(encoding="utf-8")
        assert "Water settings" in text and "Hobby limits" in text and WATER_CAUTION in text
    elif ext == ".json":
        _contract(json.loads(out.read_text(encoding="utf-8")))
    elif ext == ".csv":
        rows = list(csv.reader(out.open(encoding="utf-8")))
        assert rows[0][0] == "stage" and rows[1][0] == "bottle"


def _csv_section(path, title):
    rows = list(csv.reader(path.open(encoding="utf-8")))
    i = rows.index([title])
    header = rows[i + 1]
    body = []
    for r in rows[i + 2:]:
        if not r:
            break
        body.append(dict(zip(header, r)))
    extras = {r[0]: r for r in rows if r and r[0] in ("caution", "nose ballast", "apogee above site")}
    return header, body, extras


def test_cli_hobby_csv_and_xlsx_name_the_chosen_motors(tmp_path, capsys):
    """Export contents only: the chosen motors, a unit in every header, and the hobby caution."""
    from openpyxl import load_workbook

    assert main(["hobby", str(MOTOR_DEMO), "--json"]) == EXIT_OK
    chosen = json.loads(capsys.readouterr().out)["hobby"]["stages"]
    out = tmp_path / "stack.csv"
    assert main(["hobby", str(MOTOR_DEMO), "--out", str(out)]) == EXIT_OK
    header, body, extras = _csv_section(out, "chosen motors (bottom stage first)")
    assert all("[" in h and h.endswith("]") for h in header), header
    assert [r["motor [name]"] for r in body] == [s["motor"] for s in chosen]
    assert [float(r["total impulse [N s]"]) for r in body] == [s["total_impulse_n_s"] for s in chosen]
    assert extras["caution"][1] == HOBBY_CAUTION and extras["nose ballast"][2] == "kg"
    xl = tmp_path / "stack.xlsx"
    assert main(["hobby", str(MOTOR_DEMO), "--out", str(xl)]) == EXIT_OK
    ws = load_workbook(xl)["hobby motors"]
    rows = [r for r in ws.iter_rows(values_only=True)]
    assert list(rows[0]) == header
    assert [r[1] for r in rows[1:1 + len(chosen)]] == [s["motor"] for s in chosen]
    assert any(r[0] == "caution" and r[1] == HOBBY_CAUTION for r in rows)


def test_cli_hobby_csv_and_xlsx_give_the_water_settings(tmp_path, capsys):
    """Export contents only: fill, pressure (Pa gauge), safety factor and nozzle per stage, units in
    every header, and the water caution."""
    from openpyxl import load_workbook

    src = _write(tmp_path, WATER_FAST)
    out = tmp_path / "w.csv"
    assert main(["hobby", str(src), "--out", str(out)]) == EXIT_OK
    header, body, extras = _csv_section(out, "water settings (bottom stage first; pressures are gauge)")
    assert all("[" in h and h.endswith("]") for h in header), header
    (row,) = body
    assert row["stage [name]"] == "bottle" and float(row["fill fraction [-]"]) == 0.33
    assert float(row["launch pressure [Pa gauge]"]) == 5e5 and float(row["safety factor [-]"]) == 2.0
    assert float(row["nozzle diameter [m]"]) == pytest.approx(0.009)
    assert float(row["allowed pressure = rated / safety factor [Pa gauge]"]) == 5e5
    assert extras["caution"][1] == WATER_CAUTION and extras["apogee above site"][2] == "m"
    xl = tmp_path / "w.xlsx"
    assert main(["hobby", str(src), "--out", str(xl)]) == EXIT_OK
    rows = list(load_workbook(xl)["hobby water settings"].iter_rows(values_only=True))
    assert list(rows[0]) == header and rows[1][0] == "bottle" and rows[1][4] == 5e5
    assert any(r[0] == "caution" and r[1] == WATER_CAUTION for r in rows)


def test_cli_hobby_out_bad_extension_exit_2(tmp_path, capsys):
    assert main(["hobby", str(_write(tmp_path, WATER_FAST)), "--out", str(tmp_path / "x.pdf")]) == EXIT_BAD_INPUT
    assert "extension must be one of" in capsys.readouterr().err


def test_check_hobby_validates_without_solving(tmp_path, capsys):
    """`check_hobby` is what `sizing check` can call for files with a [hobby] table."""
    import argparse

    from sizing.cli_hobby import check_hobby

    assert check_hobby(argparse.Namespace(file=MOTOR_DEMO)) == EXIT_OK
    assert "hobby motors stack, 2 stages (booster, sustainer), 15 motors" in capsys.readouterr().out
    bad = _write(tmp_path, WATER_FAST.replace('pressure = "5 bar"', 'pressure = "9 bar"'))
    assert check_hobby(argparse.Namespace(file=bad)) == EXIT_BAD_INPUT
    assert "refuses" in capsys.readouterr().err
