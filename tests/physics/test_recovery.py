"""Tests of sizing.physics.recovery and sizing.physics.wind."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate

from sizing.errors import FieldError
from sizing.physics.recovery import (
    coast_to_apogee,
    descend,
    drag_area_for_descent_rate_m2,
    ejection_check,
    fall_speed_m_s,
    size_canopy,
)
from sizing.physics.wind import WindProfile, calm

G0 = 9.80665


# ---------------------------------------------------------------- wind
def test_wind_direction_convention_and_arrays():
    w = WindProfile("constant", speed_m_s=6.0, direction_from_deg=0.0)  # a north wind blows south
    e, n = w.velocity_m_s(np.array([0.0, 50.0, 500.0]))
    assert np.allclose(e, 0.0, atol=1e-12) and np.allclose(n, -6.0)
    assert isinstance(w.velocity_m_s(3.0)[0], float)


def test_power_law_wind():
    """V = V_ref (h / h_ref)^alpha, alpha = 1/7 (the one-seventh law)."""
    w = WindProfile("power_law", speed_m_s=4.0, direction_from_deg=90.0, top_height_m=1000.0)
    assert w.speed_at_m_s(10.0) == pytest.approx(4.0)
    assert w.speed_at_m_s(200.0) == pytest.approx(4.0 * 20 ** (1 / 7))
    assert w.speed_at_m_s(5000.0) == pytest.approx(w.speed_at_m_s(1000.0))
    assert w.speed_at_m_s(-3.0) == 0.0


def test_table_wind_interpolates_components():
    w = WindProfile("table", heights_m=(0.0, 100.0), speeds_m_s=(2.0, 4.0), directions_from_deg=(270.0, 270.0))
    assert w.velocity_m_s(50.0)[0] == pytest.approx(3.0)
    assert w.velocity_m_s(1000.0)[0] == pytest.approx(4.0)


@pytest.mark.parametrize("kw, field", [
    (dict(kind="gusty"), "wind.profile"),
    (dict(speed_m_s=-1.0), "wind.speed"),
    (dict(direction_from_deg=360.0), "wind.direction"),
    (dict(kind="power_law", exponent=0.0), "wind.exponent"),
    (dict(kind="table", heights_m=(10.0, 5.0), speeds_m_s=(1.0, 2.0), directions_from_deg=(0.0, 0.0)),
     "wind.heights"),
    (dict(kind="table"), "wind.table"),
])
def test_wind_errors_name_the_field(kw, field):
    with pytest.raises(FieldError) as info:
        WindProfile(**kw)
    assert info.value.field == field


# ---------------------------------------------------------------- canopies and descent
def _rho(alt_m: float) -> float:
    ambiance = pytest.importorskip("ambiance")
    return float(ambiance.Atmosphere(alt_m).density[0])


def test_canopy_gives_target_rate_by_the_drag_equation():
    """Drag equation 1/2 rho v^2 C_D S = m g at the landing site (density from ambiance, USSA 1976)."""
    m, v, alt = 0.75, 5.0, 120.0
    c = size_canopy(m, v, cd=0.8, altitude_m=alt)
    assert 0.5 * _rho(alt) * v * v * 0.8 * c.area_m2 == pytest.approx(m * G0, rel=1e-6)
    assert c.diameter_m == pytest.approx(math.sqrt(4 * c.area_m2 / math.pi))
    s = size_canopy(m, 10.0, kind="streamer", altitude_m=alt)
    assert s.length_m == pytest.approx(10 * s.width_m) and s.length_m * s.width_m == pytest.approx(s.area_m2)
    assert descend(m, [("main", c.drag_area_m2, 300.0)], site_altitude_m=alt).landing_rate_m_s == pytest.approx(v)


def test_drift_is_descent_time_times_constant_wind():
    """drift = descent time x wind speed for a constant wind."""
    w = WindProfile("constant", speed_m_s=7.0, direction_from_deg=225.0)  # from the south-west
    d = descend(0.6, [("drogue", 0.08, 1500.0), ("main", 0.5, 150.0)], site_altitude_m=100.0, wind=w)
    assert d.drift_m == pytest.approx(7.0 * d.time_s, rel=1e-9)
    assert d.drift_east_m > 0 and d.drift_north_m > 0


def test_descent_time_agrees_with_scipy_quad():
    """Time = integral dh / v(h), v from the drag equation with ambiance densities, by scipy quad."""
    m, cds, top, site = 0.6, 0.4, 800.0, 200.0
    t_ref, _ = integrate.quad(lambda h: 1.0 / math.sqrt(2 * m * G0 / (_rho(site + h) * cds)), 0.0, top)
    assert descend(m, [("main", cds, top)], site_altitude_m=site).time_s == pytest.approx(t_ref, rel=1e-4)


def test_power_law_wind_drifts_further_than_its_surface_value():
    legs = [("main", 0.5, 600.0)]
    const = descend(0.5, legs, wind=WindProfile("constant", speed_m_s=4.0)).drift_m
    power = descend(0.5, legs, wind=WindProfile("power_law", speed_m_s=4.0)).drift_m
    assert power > const
    assert descend(0.5, legs, wind=calm()).drift_m == 0.0


def test_descent_errors():
    with pytest.raises(FieldError):
        descend(0.5, [])
    with pytest.raises(FieldError):
        descend(0.5, [("main", 0.5, -1.0)])
    with pytest.raises(FieldError):
        drag_area_for_descent_rate_m2(0.5, 0.0, 1.2)
    with pytest.raises(FieldError):
        size_canopy(0.5, 5.0, kind="wing")


# ---------------------------------------------------------------- coast and fall closed forms
def test_coast_closed_form_agrees_with_solve_ivp():
    """dv/dt = -g - k v^2 / m at constant density, integrated by scipy solve_ivp (rtol 1e-10)."""
    m, cda, rho, v0 = 0.45, 0.0015, 1.1, 120.0
    k = 0.5 * rho * cda
    sol = integrate.solve_ivp(lambda t, y: [y[1], -G0 - k * y[1] * abs(y[1]) / m], (0, 30), [0.0, v0],
                              events=lambda t, y: y[1], rtol=1e-10, atol=1e-10, dense_output=True)
    c = coast_to_apogee(v0, m, cda, rho)
    assert c.time_to_apogee_s == pytest.approx(sol.t_events[0][0], rel=1e-7)
    assert c.height_gain_m == pytest.approx(sol.y_events[0][0][0], rel=1e-7)
    assert c.speed_m_s(2.0, v0) == pytest.approx(sol.sol(2.0)[1], rel=1e-7)


def test_fall_speed_agrees_with_solve_ivp():
    m, cda, rho = 0.45, 0.002, 1.1
    k = 0.5 * rho * cda
    sol = integrate.solve_ivp(lambda t, y: [G0 - k * y[0] ** 2 / m], (0, 3.0), [0.0], rtol=1e-10, atol=1e-12)
    assert fall_speed_m_s(3.0, m, cda, rho) == pytest.approx(sol.y[0][-1], rel=1e-7)


# ---------------------------------------------------------------- ejection timing
@pytest.mark.parametrize("delay, verdict", [(4.0, "early"), (9.0, "ok"), (14.0, "late"), (None, "no delay")])
def test_ejection_check_verdicts(delay, verdict):
    chk = ejection_check("s", delay, burnout_time_s=2.0, apogee_time_s=11.4,
                         speed_before_apogee=lambda t: 9.81 * (11.4 - t), fall_speed=lambda tau: 9.81 * tau)
    assert chk.verdict == verdict
    assert chk.recommended_delay_s == 9.0
    if delay is not None:
        assert chk.deploy_offset_s == pytest.approx(2.0 + delay - 11.4)
        assert chk.speed_at_deploy_m_s == pytest.approx(9.81 * abs(chk.deploy_offset_s))
