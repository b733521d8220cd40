"""Tests of sizing.physics.aerodrag: drag build-up from geometry."""

from __future__ import annotations

import math

import pytest

from sizing.physics.aerodrag import (
    air_viscosity_pa_s,
    drag_breakdown,
    drag_curve_from_geometry,
    skin_friction_coefficient,
)
from sizing.physics.airframe import FinSet, Stack, StageAirframe, body_tube, nose_cone
from sizing.physics.vehicle import DragCurve

D = 0.066


def _rocket(thickness_m: float = 0.003, body_m: float = 0.8) -> Stack:
    return Stack((StageAirframe("s", (nose_cone("ogive", 0.25, D), body_tube(body_m, D)),
                                FinSet(3, 0.1, 0.05, 0.07, 0.05, thickness_m)),))


@pytest.mark.parametrize("alt", [0.0, 1000.0, 3000.0])
def test_viscosity_matches_ambiance(alt):
    """Sutherland's law against the ambiance package (US Standard Atmosphere 1976)."""
    ambiance = pytest.importorskip("ambiance")
    a = ambiance.Atmosphere(alt)
    assert air_viscosity_pa_s(float(a.temperature[0])) == pytest.approx(float(a.dynamic_viscosity[0]), rel=1e-6)


def test_laminar_friction_is_blasius():
    """Blasius flat plate: C_f = 1.328 / sqrt(Re) (Schlichting, Boundary-Layer Theory, 7th ed., ch. 7)."""
    assert skin_friction_coefficient(2.0e5) == pytest.approx(1.328 / math.sqrt(2.0e5), rel=1e-12)


@pytest.mark.parametrize("re", [1e6, 3e6, 1e7])
def test_turbulent_friction_agrees_with_the_one_fifth_power_law(re):
    """The log law against Prandtl's 1/5-power law with the same transition term,
    0.074 Re^-0.2 - 1700/Re, in its range 5e5 < Re < 1e7 (Schlichting, Boundary-Layer Theory,
    7th ed., ch. 21; from memory), within 8 %."""
    ref = 0.074 * re**-0.2 - 1700.0 / re
    assert skin_friction_coefficient(re) == pytest.approx(ref, rel=0.08)


def test_friction_is_continuous_at_transition():
    assert skin_friction_coefficient(5e5 * (1 - 1e-9)) == pytest.approx(skin_friction_coefficient(5e5), rel=0.15)


def test_subsonic_cd_of_a_finned_hobby_rocket_in_the_published_range():
    """check-values.md section 5 (from memory): 0.3-0.6 subsonic for finned hobby rockets; transonic
    peak 1.5-2.5x the subsonic value; Mach 2-3 back to 1.0-1.5x."""
    c = drag_curve_from_geometry(_rocket(), site_altitude_m=120.0)
    assert isinstance(c, DragCurve)
    sub = c.cd_at(0.4)
    assert 0.3 <= sub <= 0.6
    peak = max(c.cd_at(m) for m in (1.0, 1.05, 1.1, 1.2))
    assert 1.1 * sub <= peak <= 2.5 * sub
    assert 0.8 * sub <= c.cd_at(2.5) <= 1.5 * sub


def test_base_drag_follows_fleeman_correlation():
    """Fleeman, Tactical Missile Design, 2nd ed., ch. 2: 0.12 + 0.13 M^2 (M < 1), 0.25/M (M > 1)."""
    st = _rocket()
    assert drag_breakdown(st, 0, 0.5).base == pytest.approx(0.12 + 0.13 * 0.25)
    assert drag_breakdown(st, 0, 2.0).base == pytest.approx(0.125)


def test_drag_trends_thicker_fins_and_longer_body_add_drag():
    assert drag_breakdown(_rocket(0.006), 0, 0.3).total > drag_breakdown(_rocket(0.002), 0, 0.3).total
    assert drag_breakdown(_rocket(body_m=1.5), 0, 0.3).body_friction > drag_breakdown(_rocket(), 0, 0.3).body_friction


def test_wave_drag_only_transonic_and_above():
    st = _rocket()
    assert drag_breakdown(st, 0, 0.7).nose_wave == 0.0 == drag_breakdown(st, 0, 0.7).fin_wave
    assert drag_breakdown(st, 0, 1.5).nose_wave > 0 and drag_breakdown(st, 0, 1.5).fin_wave > 0


def test_reference_diameter_rescales_coefficients():
    st = _rocket()
    a = drag_breakdown(st, 0, 0.3).total
    b = drag_breakdown(st, 0, 0.3, reference_diameter_m=2 * D).total
    assert b == pytest.approx(a / 4)
