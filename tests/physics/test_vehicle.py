"""Vehicle description: drag curve, stages, vehicle, launch site, stage specs."""

from __future__ import annotations

import math

import pytest

from sizing.errors import FieldError
from sizing.physics.vehicle import (
    P0_PA,
    DragCurve,
    FlightStage,
    FlightStageSpec,
    LaunchSite,
    Vehicle,
    build_vehicle,
)


def test_drag_curve_interpolates_and_clamps():
    """Linear interpolation and end clamping of the C_D table, values computed by hand
    (consistency check, no external source)."""
    d = DragCurve((0.0, 1.0, 2.0), (0.3, 0.6, 0.4))
    assert d.cd_at(0.5) == pytest.approx(0.45)
    assert d.cd_at(1.5) == pytest.approx(0.5)
    assert d.cd_at(-1.0) == 0.3
    assert d.cd_at(9.0) == 0.4
    assert DragCurve.constant(0.5).cd_at(3.0) == 0.5


@pytest.mark.parametrize(
    "mach, cd, field",
    [((0.0, 1.0, 1.0), (0.3, 0.4, 0.5), "drag.mach"),
     ((0.0, 2.0, 1.0), (0.3, 0.4, 0.5), "drag.mach"),
     ((0.0, 1.0), (0.3, 0.0), "drag.cd"),
     ((0.0, 1.0), (0.3,), "drag.cd"),
     ((-0.5, 1.0), (0.3, 0.3), "drag.mach")],
)
def test_drag_curve_rejects_bad_tables(mach, cd, field):
    with pytest.raises(FieldError) as info:
        DragCurve(mach, cd)
    assert info.value.field == field


def test_default_drag_curve_within_published_ranges():
    """Typical C_D(Mach) ranges for slender finned rockets, from memory (shapes after Fleeman,
    Tactical Missile Design, 2nd ed., 2006, ch. 2, and Hoerner, Fluid-Dynamic Drag, 1965; not
    checked against the books): subsonic 0.15-0.6 for finned bodies; transonic peak at Mach
    1.0-1.2, 1.5-2.5x subsonic; Mach 2-3 back to 1.0-1.5x subsonic; slowly decreasing
    hypersonic. Range check only. (Tabulated in the project's shared check values, sec. 5.)"""
    d = DragCurve.default_slender_body()
    sub = d.cd_at(0.5)
    assert 0.15 <= sub <= 0.6
    grid = [0.8 + 0.01 * i for i in range(100)]
    m_peak = max(grid, key=d.cd_at)
    assert 1.0 <= m_peak <= 1.2
    assert 1.5 <= d.cd_at(m_peak) / sub <= 2.5
    for m in (2.0, 3.0):
        assert 1.0 <= d.cd_at(m) / sub <= 1.5
    assert d.cd_at(6.0) <= d.cd_at(5.0) <= d.cd_at(3.0)


def test_constant_thrust_stage_derived_quantities():
    """mdot = F/(Isp g0), t_b = m_p/mdot (Sutton & Biblarz, Rocket Propulsion Elements, 9th ed.,
    eq. 2-5; equation number from memory); case V1 inputs m_p 800 kg, Isp 250 s, F 49 033.25 N
    -> mdot 20 kg/s, t_b 40 s, computed. (Case V1 is tabulated in the project's shared check
    values, sec. 4.)"""
    s = FlightStage("b", 800.0, 200.0, 250.0, diameter_m=0.3, thrust_vac_n=49033.25)
    assert s.mass_flow_kg_s == pytest.approx(20.0, rel=1e-12)
    assert s.burn_time_s == pytest.approx(40.0, rel=1e-12)
    assert s.exit_area_m2 == 0.0
    assert s.structural_coefficient == pytest.approx(0.2)


def test_exit_area_from_isp_gives_sea_level_thrust():
    """Thrust equation F = F_vac - p_a A_e (Sutton & Biblarz, Rocket Propulsion Elements, 9th ed.,
    eq. 2-14; equation number from memory); with A_e from the two Isp values the sea-level
    thrust is mdot g0 Isp_sl."""
    s = FlightStage("b", 1000.0, 100.0, 320.0, isp_sl_s=280.0, diameter_m=1.0, thrust_vac_n=1e5)
    mdot = s.mass_flow_kg_s
    assert s.thrust_at(1.0, P0_PA) == pytest.approx(mdot * 280.0 * s.g0_m_s2, rel=1e-12)
    assert s.thrust_at(1.0, 0.0) == pytest.approx(1e5)
    assert s.thrust_at(-1.0, 0.0) == 0.0


def test_thrust_curve_stage_impulse_and_exhaust_velocity():
    """Total impulse I_t = integral of F dt by the trapezoid rule; with propellant use
    proportional to impulse, c = I/m_p (definition of specific impulse, Sutton & Biblarz, Rocket
    Propulsion Elements, 9th ed., ch. 2; from memory). Values computed by hand."""
    s = FlightStage("m", 0.05, 0.1, 200.0, diameter_m=0.03,
                    thrust_curve=((0.0, 0.1, 1.0), (0.0, 100.0, 50.0)))
    assert s.total_impulse_vac_n_s == pytest.approx(5.0 + 67.5)
    assert s.exhaust_velocity_vac_m_s == pytest.approx(72.5 / 0.05)
    assert s.burn_time_s == 1.0
    assert s.thrust_vac_at(0.55) == pytest.approx(75.0)


@pytest.mark.parametrize(
    "kwargs, field",
    [({"diameter_m": -0.1, "thrust_vac_n": 10.0}, "stages.s.diameter_m"),
     ({"diameter_m": 0.1}, "stages.s.thrust_vac_n"),
     ({"diameter_m": 0.1, "thrust_vac_n": -1.0}, "stages.s.thrust_vac_n"),
     ({"diameter_m": 0.1, "thrust_vac_n": 10.0, "isp_sl_s": 300.0}, "stages.s.isp_sl_s"),
     ({"diameter_m": 0.1, "thrust_curve": ((0.0, 1.0, 0.5), (1.0, 1.0, 1.0))}, "stages.s.thrust_curve"),
     ({"diameter_m": 0.1, "thrust_curve": ((0.0, 1.0), (1.0, 1.0)),
       "propellant_mass_curve": ((0.0, 1.0), (0.5, 0.0))}, "stages.s.propellant_mass_curve")],
)
def test_flight_stage_rejects_bad_input(kwargs, field):
    with pytest.raises(FieldError) as info:
        FlightStage("s", 1.0, 0.5, 200.0, **kwargs)
    assert info.value.field == field
    assert "Got" in str(info.value) or "required" in str(info.value)


def test_vehicle_reference_area_is_largest_remaining_diameter():
    """Reference area pi d^2/4 of the largest remaining diameter and stage mass bookkeeping,
    values computed by hand (consistency check, no external source)."""
    a = FlightStage("a", 10.0, 2.0, 250.0, diameter_m=0.5, thrust_vac_n=1e3)
    b = FlightStage("b", 5.0, 1.0, 250.0, diameter_m=0.2, thrust_vac_n=5e2)
    v = Vehicle((a, b), 1.0, payload_diameter_m=0.3)
    assert v.reference_area_m2(0) == pytest.approx(math.pi * 0.25 ** 2)
    assert v.reference_area_m2(1) == pytest.approx(math.pi * 0.15 ** 2)
    assert v.gross_mass_kg == pytest.approx(19.0)
    assert v.ignition_mass_kg(1) == pytest.approx(7.0)
    with pytest.raises(FieldError):
        Vehicle((a, a), 1.0)


@pytest.mark.parametrize(
    "kwargs, field",
    [({"altitude_m": -700.0}, "site.altitude_m"), ({"latitude_deg": 91.0}, "site.latitude_deg"),
     ({"rail_angle_deg": 90.0}, "site.rail_angle_deg"), ({"rail_length_m": -1.0}, "site.rail_length_m")],
)
def test_launch_site_rejects_out_of_range(kwargs, field):
    with pytest.raises(FieldError) as info:
        LaunchSite(**kwargs)
    assert info.value.field == field


def test_build_vehicle_sets_thrust_from_thrust_to_weight():
    """First stage: sea-level thrust = T/W m0 g0; upper stages: vacuum thrust = T/W m_ign g0
    (definition of thrust-to-weight; consistency check, no external source)."""
    specs = [FlightStageSpec("a", 300.0, 0.1, 1.3, diameter_m=3.0, isp_sl_s=270.0),
             FlightStageSpec("b", 340.0, 0.12, 0.8, diameter_m=3.0)]
    v = build_vehicle(specs, [1e5, 2e4], [1e4, 2e3], 1000.0)
    g0 = 9.80665
    assert v.stages[0].thrust_at(0.0, P0_PA) == pytest.approx(1.3 * v.gross_mass_kg * g0, rel=1e-12)
    assert v.stages[1].thrust_vac_n == pytest.approx(0.8 * v.ignition_mass_kg(1) * g0, rel=1e-12)


def test_build_vehicle_rejects_liftoff_thrust_to_weight_below_one():
    specs = [FlightStageSpec("a", 300.0, 0.1, 0.9, diameter_m=3.0)]
    with pytest.raises(FieldError) as info:
        build_vehicle(specs, [1e5], [1e4], 1000.0)
    assert info.value.field == "stages.a.thrust_to_weight"
    assert "> 1" in str(info.value)


def test_stage_spec_rejects_bad_structural_coefficient():
    with pytest.raises(FieldError, match=r"\(0, 1\)"):
        FlightStageSpec("a", 300.0, 1.2, 2.0, diameter_m=1.0)
