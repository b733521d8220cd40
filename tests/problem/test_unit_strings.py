"""A string with no unit for a field with a dimension is bad input in every file the program reads
(problem, hobby, motor list, [dispersions] table): exit 2, one line naming file, field and value."""

from __future__ import annotations

from pathlib import Path

import pytest

from sizing.cli import main
from sizing.units import MSG_NO_UNIT, SI_UNITS, UNIT_EXAMPLES

ROOT = Path(__file__).resolve().parents[2]
HOBBY = ROOT / "problems" / "hobby_motor_two_stage.toml"
MOTORS = ROOT / "problems" / "motors" / "demo_motors.toml"


def _no_unit(value: str, kind: str) -> str:
    plain = "degrees" if kind in ("angle", "angular_rate") else "SI"
    return MSG_NO_UNIT.format(value=value, plain=plain, unit=SI_UNITS[kind].replace("**", "^"),
                              example=UNIT_EXAMPLES[kind])


def _check_one_line(capsys, path: Path, expected: str) -> None:
    assert main(["check", str(path)]) == 2
    cap = capsys.readouterr()
    assert cap.err.splitlines() == [f"error: {expected}"], cap.err
    assert "Traceback" not in cap.err + cap.out


def _hobby_copy(tmp_path: Path, old: str, new: str) -> Path:
    text = HOBBY.read_text(encoding="utf-8").replace(
        'motors = "motors/demo_motors.toml"', f'motors = "{MOTORS.as_posix()}"')
    assert old in text
    p = tmp_path / "hobby.toml"
    p.write_text(text.replace(old, new, 1), encoding="utf-8")
    return p


@pytest.mark.parametrize("old, new, field, value, kind", [
    ('payload_mass = "180 g"', 'payload_mass = "180"', "mission.payload_mass", "180", "mass"),
    ('diameter = "66 mm"', 'diameter = "66"', "stage[1] (booster).diameter", "66", "length"),
    ('fin_span = "85 mm"', 'fin_span = "85"', "stage[1] (booster).geometry.fin_span", "85", "length"),
    ('rail_angle = "5 deg"', 'rail_angle = "5"', "launch.rail_angle", "5", "angle"),
])
def test_hobby_unitless_string_exits_2_in_one_line(tmp_path, capsys, old, new, field, value, kind):
    p = _hobby_copy(tmp_path, old, new)
    _check_one_line(capsys, p, f"{p}: {field}: {_no_unit(value, kind)}")


def test_hobby_dimensionless_string_is_still_read(tmp_path, capsys):
    """min_thrust_to_weight is a ratio: "5" is 5, as before."""
    p = _hobby_copy(tmp_path, "min_thrust_to_weight = 5 ", 'min_thrust_to_weight = "5" ')
    assert main(["check", str(p)]) == 0, capsys.readouterr().err


def test_motor_list_unitless_string_exits_2_naming_the_list(tmp_path, capsys):
    """A motor list read through a hobby file: the fault names the list file and the motor."""
    motors = tmp_path / "motors.toml"
    text = MOTORS.read_text(encoding="utf-8")
    assert "total_impulse = 28.1\n" in text
    motors.write_text(text.replace("total_impulse = 28.1\n", 'total_impulse = "28.1"\n', 1), encoding="utf-8")
    p = _hobby_copy(tmp_path, f'motors = "{MOTORS.as_posix()}"', f'motors = "{motors.as_posix()}"')
    assert main(["check", str(p)]) == 2
    err = capsys.readouterr().err.splitlines()
    assert len(err) == 1, err
    assert err[0].startswith(f"error: {p}: hobby.motors ({motors}): motor[")
    assert err[0].endswith(f"(Wren E28).total_impulse: {_no_unit('28.1', 'impulse')}")


def test_dispersion_table_unitless_string_exits_2_in_one_line(tmp_path, capsys):
    text = (ROOT / "problems" / "heron_confidence.toml").read_text(encoding="utf-8")
    i = text.index("[[dispersions.input]]")
    table = '[[dispersions.input]]\nquantity = "payload_mass"\ndistribution = "uniform"\nhalf_width = "0.2"\n\n'
    p = tmp_path / "p.toml"
    p.write_text(text[:i] + table + text[i:], encoding="utf-8")
    _check_one_line(capsys, p, f"{p}: dispersions.input[1] (payload_mass).half_width: {_no_unit('0.2', 'mass')}")
