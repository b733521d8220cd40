"""`sizing.units.to_si`: plain numbers are SI, a string carries its unit (except for dimensionless fields)."""

from __future__ import annotations

import re

import pytest

from sizing.units import MSG_NO_UNIT, SI_UNITS, UNIT_EXAMPLES, to_si

DIMENSIONAL = sorted(k for k, u in SI_UNITS.items() if u)


@pytest.mark.parametrize("kind", DIMENSIONAL)
def test_to_si_unitless_string_is_refused_for_every_dimensional_kind(kind):
    """"180" could be kg, g or lb: refused for each kind with a dimension, naming the SI unit and an example."""
    with pytest.raises(ValueError, match=re.escape("'180' has no unit; write a plain number for ")) as info:
        to_si("180", kind)
    text = str(info.value)
    assert f"({SI_UNITS[kind].replace('**', '^')})" in text and repr(UNIT_EXAMPLES[kind]) in text
    assert to_si(180, kind) == 180.0  # the plain number stays SI


@pytest.mark.parametrize("kind", DIMENSIONAL)
def test_to_si_unit_example_of_each_kind_converts(kind):
    """The example the no-unit message offers is itself accepted for that kind (a finite number)."""
    assert to_si(UNIT_EXAMPLES[kind], kind) > 0


def test_to_si_no_unit_message_is_the_constant():
    with pytest.raises(ValueError) as info:
        to_si(" 1e3 ", "mass")
    assert str(info.value) == MSG_NO_UNIT.format(value=" 1e3 ", plain="SI", unit="kg", example="12 kg")


@pytest.mark.parametrize("value, expected", [("0.08", 0.08), ("8 %", 0.08), (0.08, 0.08), ("1/2", 0.5)])
def test_to_si_dimensionless_accepts_strings_without_units(value, expected):
    assert to_si(value, "dimensionless") == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("value, kind", [("8 %", "mass"), ("8 %", "angle"), ("2 ppm", "length")])
def test_to_si_dimensionless_unit_for_a_dimensional_kind_is_the_wrong_dimension(value, kind):
    with pytest.raises(ValueError, match="has the wrong dimension"):
        to_si(value, kind)


def test_to_si_angle_in_radians_converts_to_degrees():
    """1 rad = 180/pi deg (definition of the radian)."""
    assert to_si("1 rad", "angle") == pytest.approx(57.29577951308232, rel=1e-15)
