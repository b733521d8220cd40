"""Problem files: every validation branch gives one clear line naming file, field, value."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from sizing.errors import (
    MSG_ISP_AND_VE,
    MSG_ISP_OR_VE_REQUIRED,
    MSG_MISSING_KEY,
    MSG_STRUCTURAL_COEFFICIENT,
    MSG_TOML_SYNTAX,
    MSG_UNKNOWN_KEY,
    ProblemDefinitionError,
)
from sizing.problem import SolveFor, load_problem, problem_from_dict

ROOT = Path(__file__).resolve().parents[2]

BASE = """
[mission]
payload_mass = 100
delta_v = 5000
[[stage]]
name = "low"
isp = 280
structural_coefficient = 0.1
[[stage]]
name = "high"
isp = 320
structural_coefficient = 0.12
"""


def _write(tmp_path, text, name="p.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


def _faults(tmp_path, text):
    p = _write(tmp_path, text)
    with pytest.raises(ProblemDefinitionError) as info:
        load_problem(p)
    err = info.value
    assert err.source == str(p)
    assert str(p) in str(err)
    return list(err.faults)


@pytest.mark.parametrize("path", sorted((ROOT / "problems").glob("*.toml")), ids=lambda p: p.name)
def test_load_problem_demo_files_are_valid(path, capsys):
    """Every shipped demo passes `sizing check` (hobby stacks go to their own loader)."""
    from sizing.cli import main

    assert main(["check", str(path)]) == 0, capsys.readouterr().err


def test_load_problem_units_are_converted_to_si(tmp_path):
    """1 lb = 0.45359237 kg exactly (international avoirdupois pound, 1959; also
    scipy.constants.pound), so 220.462 lb = 100.000 kg to 1e-5; c = Isp g0 with standard gravity
    g0 = 9.80665 m/s^2 exactly (scipy.constants.g)."""
    text = BASE.replace("payload_mass = 100", 'payload_mass = "220.462 lb"').replace(
        "delta_v = 5000", 'delta_v = "5 km/s"')
    p = load_problem(_write(tmp_path, text))
    assert p.payload_mass_kg == pytest.approx(100.0, rel=1e-5)
    assert p.delta_v_m_s == pytest.approx(5000.0)
    assert p.stages[0].exhaust_velocity_m_s == pytest.approx(280 * 9.80665)
    assert p.solve_for == SolveFor.GROSS_MASS


def test_load_problem_malformed_toml(tmp_path):
    faults = _faults(tmp_path, "[mission\npayload_mass = 1")
    assert len(faults) == 1 and MSG_TOML_SYNTAX in faults[0]


def test_load_problem_missing_file(tmp_path):
    with pytest.raises(ProblemDefinitionError, match="file not found"):
        load_problem(tmp_path / "nope.toml")


def test_load_problem_unknown_key_suggests_spelling(tmp_path):
    faults = _faults(tmp_path, BASE.replace("structural_coefficient = 0.1\n", "structural_coeficient = 0.1\n"))
    assert any(MSG_UNKNOWN_KEY in f and "stage[1] (low).structural_coeficient" in f
               and "Did you mean 'structural_coefficient'" in f for f in faults)


def test_load_problem_missing_mission_table(tmp_path):
    faults = _faults(tmp_path, BASE.split("[[stage]]", 1)[1].join(["[[stage]]", ""]))
    assert any(f.startswith("mission") and MSG_MISSING_KEY in f for f in faults)


def test_load_problem_negative_mass(tmp_path):
    faults = _faults(tmp_path, BASE.replace("payload_mass = 100", "payload_mass = -3"))
    assert faults == ["mission.payload_mass: must be > 0. Got -3."]


@pytest.mark.parametrize("value", ["1.2", "0", "1", "-0.1"])
def test_load_problem_structural_coefficient_outside_unit_interval(tmp_path, value):
    faults = _faults(tmp_path, BASE.replace("structural_coefficient = 0.12", f"structural_coefficient = {value}"))
    assert len(faults) == 1
    assert faults[0].startswith("stage[2] (high).structural_coefficient: " + MSG_STRUCTURAL_COEFFICIENT)
    assert f"Got {value}" in faults[0]


def test_load_problem_wrong_unit_dimension(tmp_path):
    faults = _faults(tmp_path, BASE.replace("delta_v = 5000", 'delta_v = "5 kg"'))
    assert len(faults) == 1 and "mission.delta_v" in faults[0] and "wrong dimension" in faults[0]


@pytest.mark.parametrize("old, new, field, value, kind", [
    ("payload_mass = 100", 'payload_mass = "180"', "mission.payload_mass", "180", "mass"),
    ("delta_v = 5000", 'delta_v = "5000"', "mission.delta_v", "5000", "velocity"),
    ("isp = 280", 'isp = "280"', "stage[1] (low).isp", "280", "time"),
    ("isp = 280", 'isp = 280\ndiameter = "130"', "stage[1] (low).diameter", "130", "length"),
    ("delta_v = 5000", 'delta_v = 5000\ninclination = "28.5"', "mission.inclination", "28.5", "angle"),
])
def test_load_problem_unitless_string_exits_2_in_one_line(tmp_path, capsys, old, new, field, value, kind):
    """A string is a number with a unit (docs/problem-files.md): "180" for a mass is refused, not read as
    180 kg, in one line naming the file, the field, the value and the two allowed forms."""
    from sizing.cli import main
    from sizing.units import SI_UNITS, UNIT_EXAMPLES

    p = _write(tmp_path, BASE.replace(old, new, 1))
    assert main(["check", str(p)]) == 2
    cap = capsys.readouterr()
    plain = "degrees" if kind == "angle" else "SI"
    assert cap.err.splitlines() == [
        f"error: {p}: {field}: {value!r} has no unit; write a plain number for {plain} ({SI_UNITS[kind]}) "
        f"or a number with a unit such as {UNIT_EXAMPLES[kind]!r}."]
    assert "Traceback" not in cap.err + cap.out


@pytest.mark.parametrize("value", ['"0.1"', '"10 %"', "0.1"])
def test_load_problem_dimensionless_string_is_still_a_number(tmp_path, value):
    """A dimensionless field takes a plain number, a string number or a percentage, as before."""
    p = load_problem(_write(tmp_path, BASE.replace("structural_coefficient = 0.1\n",
                                                   f"structural_coefficient = {value}\n")))
    assert p.stages[0].structural_coefficient == pytest.approx(0.1, rel=1e-12)


def test_load_problem_percent_for_a_mass_is_the_wrong_dimension(tmp_path):
    """"8 %" reduces to a pure number in pint; for a mass it is a wrong dimension, not 8 kg."""
    faults = _faults(tmp_path, BASE.replace("payload_mass = 100", 'payload_mass = "8 %"'))
    assert faults == ["mission.payload_mass: '8 %' has the wrong dimension; a mass in units such as kg "
                      "is expected."]


def test_load_problem_unparseable_unit(tmp_path):
    faults = _faults(tmp_path, BASE.replace("delta_v = 5000", 'delta_v = "fast"'))
    assert "mission.delta_v" in faults[0] and "cannot read" in faults[0]


def test_load_problem_isp_or_exhaust_velocity_required(tmp_path):
    faults = _faults(tmp_path, BASE.replace("isp = 320\n", ""))
    assert faults == [f"stage[2] (high): {MSG_ISP_OR_VE_REQUIRED}."]


def test_load_problem_isp_and_exhaust_velocity_both_given(tmp_path):
    faults = _faults(tmp_path, BASE.replace("isp = 320\n", "isp = 320\nexhaust_velocity = 3100\n"))
    assert MSG_ISP_AND_VE in faults[0]


def test_load_problem_collects_several_faults(tmp_path):
    text = BASE.replace("payload_mass = 100", "payload_mass = -1").replace(
        "structural_coefficient = 0.12", "structural_coefficient = 2")
    faults = _faults(tmp_path, text)
    assert len(faults) == 2


def test_load_problem_needs_two_of_three_mission_quantities(tmp_path):
    faults = _faults(tmp_path, BASE.replace("delta_v = 5000\n", ""))
    assert "give two of payload_mass, gross_mass and a target" in faults[0]


def test_load_problem_all_three_given_needs_solve_for(tmp_path):
    faults = _faults(tmp_path, BASE.replace("delta_v = 5000", "delta_v = 5000\ngross_mass = 3000"))
    assert "solve_for" in faults[0]


def test_load_problem_infers_solve_for(tmp_path):
    p = load_problem(_write(tmp_path, BASE.replace("payload_mass = 100", "gross_mass = 5000")))
    assert p.solve_for == SolveFor.PAYLOAD_MASS
    p = load_problem(_write(tmp_path, BASE.replace("delta_v = 5000", "gross_mass = 5000")))
    assert p.solve_for == SolveFor.DELTA_V


def test_load_problem_gross_mass_must_exceed_payload(tmp_path):
    faults = _faults(tmp_path, BASE.replace("delta_v = 5000", "gross_mass = 50"))
    assert "mission.gross_mass: must be larger than payload_mass" in faults[0]


def test_load_problem_duplicate_stage_names(tmp_path):
    faults = _faults(tmp_path, BASE.replace('name = "high"', 'name = "low"'))
    assert "names must be unique" in faults[0]


def test_load_problem_min_above_max_mass_ratio(tmp_path):
    faults = _faults(tmp_path, BASE.replace("isp = 320", "isp = 320\nmin_mass_ratio = 3\nmax_mass_ratio = 2"))
    assert "min_mass_ratio: must be <= max_mass_ratio" in faults[0]


def test_load_problem_drag_table_must_increase(tmp_path):
    faults = _faults(tmp_path, BASE.replace("isp = 280", "isp = 280\ndrag_mach = [0, 1, 0.5]\ndrag_cd = [0.3, 0.5, 0.4]"))
    assert "drag_mach: must be strictly increasing" in faults[0]


def test_load_problem_liftoff_thrust_to_weight_above_one(tmp_path):
    faults = _faults(tmp_path, BASE.replace("isp = 280", "isp = 280\nthrust_to_weight = 0.8"))
    assert "thrust_to_weight: the first stage must lift off" in faults[0]


def test_load_problem_wrong_type(tmp_path):
    faults = _faults(tmp_path, BASE.replace("payload_mass = 100", "payload_mass = true"))
    assert "mission.payload_mass" in faults[0]


def test_load_problem_bad_method_is_listed(tmp_path):
    faults = _faults(tmp_path, BASE + '\n[solver]\nmethod = "newton"\n')
    assert "solver.method: must be one of" in faults[0]


def test_problem_from_dict_raises_with_source_name():
    with pytest.raises(ProblemDefinitionError, match=re.escape("<study case 3>")):
        problem_from_dict({"mission": {}}, source="<study case 3>")


def test_problem_definition_error_pickles():
    import pickle

    err = ProblemDefinitionError("x.toml", ["a: b.", "c: d."])
    again = pickle.loads(pickle.dumps(err))
    assert again.faults == err.faults and str(again) == str(err)
    two = ProblemDefinitionError("x.toml", ["a: b.", "dispersions: d."], ["x.toml", "t.toml"])
    again = pickle.loads(pickle.dumps(two))
    assert again.fault_sources == ("x.toml", "t.toml") and str(again) == str(two)


def test_problem_definition_error_names_the_file_of_each_fault():
    """Faults from two files (a design and its --dispersions table) each carry their own file."""
    one = ProblemDefinitionError("t.toml", ["dispersions.seed: must be >= 0."], ["t.toml"])
    assert str(one) == "t.toml: dispersions.seed: must be >= 0."
    two = ProblemDefinitionError("x.toml", ["a: b.", "dispersions: d."], ["x.toml", "t.toml"])
    assert str(two) == "x.toml and t.toml have 2 errors\n  x.toml: a: b.\n  t.toml: dispersions: d."
    with pytest.raises(ValueError, match="one file per fault"):
        ProblemDefinitionError("x.toml", ["a: b."], ["x.toml", "t.toml"])
