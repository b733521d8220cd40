"""Body-axis flight (MODE_BODY, weathercocking): closed forms, limits, an independent integrator, trends."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.linalg import expm

from sizing.errors import FieldError
from sizing.physics.airframe import Configuration, PointMass
from sizing.physics.flight import AscentProfile, Wind, fly_many, fly_vertical
from sizing.physics.flight import layout as L
from sizing.physics.flight.equations import wind_velocity
from sizing.physics.flight.kernel import run_flight
from sizing.physics.flight.setup import prepare_flight
from sizing.physics.vehicle import DragCurve, FlightStage, LaunchSite, Vehicle
from sizing.physics.wind import WindProfile
from tests.physics.test_flight_kernel import _reference_burnouts

RHO = 1.0  # exponential atmosphere with a huge scale height: constant density [kg/m^3]
CONST_AIR = ("exponential", RHO, 1e12)


def _config(*, cn=10.0, x_cp=0.7, cnx2=None, masses=((1.0, 0.0), (1.0, 1.0)), d=0.1, prop=(1e-9, 0.5), length=1.0):
    """A synthetic one-stage configuration: point masses (kg, x from the tip), C_N_alpha and x_cp flat in Mach."""
    dry = tuple(PointMass(f"m{i}", m, x) for i, (m, x) in enumerate(masses))
    m_dry = sum(m for m, _ in masses)
    return Configuration(
        stages=("s",), reference_diameter_m=d, length_m=length, mach_grid=(0.0, 0.8), cn_alpha_table=(cn, cn),
        x_cp_table_m=(x_cp, x_cp), components=(), full_mass_kg=m_dry + prop[0], burnout_mass_kg=m_dry, _dry=dry,
        _propellant_x_m=prop[1], cn_alpha_x2_table_m2=() if cnx2 is None else (cnx2, cnx2))


def _coast_setup(cfg, *, speed, alpha0, t_end, rtol=1e-11):
    """A coasting body in level flight at `speed`, its axis pitched `alpha0` above the velocity; gravity and
    zero-lift drag off, constant density; free from t = 0 (a 1e-9 kg micro-burn starts the phase table)."""
    mass = cfg.full_mass_kg
    st = FlightStage("s", cfg.full_mass_kg - cfg.burnout_mass_kg, cfg.burnout_mass_kg, 200.0,
                     diameter_m=cfg.reference_diameter_m, thrust_vac_n=1e-6, drag=DragCurve.constant(0.3))
    setup = prepare_flight(Vehicle((st,), 0.0), LaunchSite(), profile="vertical", earth="flat", with_gravity=False,
                           with_drag=False, stop_at="impact", atmosphere=CONST_AIR, stability=[cfg], rtol=rtol,
                           max_step_s=0.002)
    setup.y0[2] = 1000.0
    setup.y0[3] = speed
    setup.y0[6] = mass
    setup.y0[L.Y_AXIS:L.Y_AXIS + 3] = (math.cos(alpha0), 0.0, math.sin(alpha0))
    setup.opt[L.OPT_VERTICAL] = 0.0  # no rail: free from t = 0
    setup.opt[L.OPT_MAX_TIME] = t_end
    return setup


def _alpha_history(setup):
    out, _y, _, _, hist, _ = run_flight(*setup.kernel_args(8192))
    h = hist[: int(out[L.OUT_N_HIST])]
    h = h[np.argsort(h[:, L.H_T], kind="stable")]
    return h[:, L.H_T], h[:, L.H_ALPHA], h


def test_small_angle_pitch_oscillation_matches_the_damped_oscillator():
    """Small-angle restoring dynamics of a statically stable body at constant speed and density, its centre
    of gravity held on a straight path (a 1e5 kg mass at the CG: no plunge): I a'' + c a' + k a = 0 with
    k = q S C_N_alpha (x_cp - x_cg), c = 1/2 rho V S sum C_N_alpha,i (x_i - x_cg)^2 (the corrective and
    aerodynamic damping moment coefficients of Mandell, Caporaso & Bengen, Topics in Advanced Model
    Rocketry, MIT Press, 1973, ch. 4-5; from memory), whose solution from rest at a0 is
    a(t) = a0 exp(-zeta w_n t) (cos w_d t + zeta w_n / w_d sin w_d t) (free damped oscillation; e.g.
    Kreyszig, Advanced Engineering Mathematics, 10th ed., Sec. 2.4; from memory)."""
    cfg = _config(masses=((1.0, 0.0), (1.0, 1.0), (1e5, 0.5)), cn=10.0, x_cp=0.7, cnx2=10.0 * 0.7**2 + 0.5)
    speed, a0 = 60.0, 1e-3
    setup = _coast_setup(cfg, speed=speed, alpha0=a0, t_end=3.0)
    t, alpha, _ = _alpha_history(setup)
    area = cfg.reference_area_m2
    inertia = cfg.pitch_inertia_kg_m2(cfg.full_mass_kg)
    assert inertia == pytest.approx(0.5, rel=1e-9)  # the two unit masses 0.5 m either side
    q = 0.5 * RHO * speed**2
    k = q * area * 10.0 * (0.7 - 0.5)
    c = 0.5 * RHO * speed * area * cfg.pitch_damping_sum_m2(0.0, cfg.full_mass_kg)
    assert cfg.pitch_damping_sum_m2(0.0, cfg.full_mass_kg) == pytest.approx(0.5 + 10.0 * (0.49 - 0.7 + 0.25))
    wn = math.sqrt(k / inertia)
    zeta = c / (2.0 * math.sqrt(k * inertia))
    wd = wn * math.sqrt(1.0 - zeta**2)
    assert 0.02 < zeta < 0.5 and wd * 3.0 > 4 * math.pi  # a lightly damped ring, two periods or more
    expected = a0 * np.exp(-zeta * wn * t) * (np.cos(wd * t) + zeta * wn / wd * np.sin(wd * t))
    np.testing.assert_allclose(alpha, np.abs(expected), rtol=0, atol=2e-4 * a0)


def test_pitch_and_plunge_follow_the_linearised_equations():
    """The same coast with the body's own mass (the normal force turns the flight path): the nonlinear
    kernel flight at a0 = 1e-3 rad equals the linearised short-period equations at constant speed,
    theta' = w, I w' = -q S (C1 a + C2 w / V), m V gamma' = q S (C_N_alpha a + C1 w / V), a = theta - gamma,
    solved exactly by the matrix exponential (scipy.linalg.expm, a general-purpose reference library)."""
    cfg = _config(masses=((0.6, 0.1), (0.4, 0.9)), cn=12.0, x_cp=0.75)
    speed, a0, t_end = 50.0, 1e-3, 2.0
    setup = _coast_setup(cfg, speed=speed, alpha0=a0, t_end=t_end)
    t, alpha, _ = _alpha_history(setup)
    m = cfg.full_mass_kg
    xg = cfg.x_cg_m(m)
    inertia = cfg.pitch_inertia_kg_m2(m)
    qs = 0.5 * RHO * speed**2 * cfg.reference_area_m2
    c1 = 12.0 * (0.75 - xg)
    c2 = cfg.pitch_damping_sum_m2(0.0, m)
    # state (theta, w, gamma)
    a = np.array([[0.0, 1.0, 0.0],
                  [-qs * c1 / inertia, -qs * c2 / (speed * inertia), qs * c1 / inertia],
                  [qs * 12.0 / (m * speed), qs * c1 / (m * speed**2), -qs * 12.0 / (m * speed)]])
    x0 = np.array([a0, 0.0, 0.0])
    lin = np.array([abs((expm(a * tt) @ x0)[0] - (expm(a * tt) @ x0)[2]) for tt in t])
    np.testing.assert_allclose(alpha, lin, rtol=0, atol=3e-4 * a0)


def _tiny_hobby_stage(prop_kg=0.1, dry_kg=0.9):
    """A 54 mm motor stage (thrust curve from the kernel tests; invented)."""
    return FlightStage("motor", prop_kg, dry_kg, 180.0, diameter_m=0.054, drag=DragCurve.default_slender_body(),
                       thrust_curve=((0.0, 0.05, 1.4, 1.5), (0.0, 400.0, 320.0, 0.0)))


def _lag_config(eps_kg, lever_m=0.05, mass_kg=0.9, nozzle_m=0.5):
    """All the mass at the CG (0.5 m) but two eps masses 0.5 m either side; one component `lever_m` aft;
    the nozzle at `nozzle_m` (at the CG: no jet damping)."""
    return _config(masses=((mass_kg - 2 * eps_kg, 0.5), (eps_kg, 0.0), (eps_kg, 1.0)), cn=10.0,
                   x_cp=0.5 + lever_m, d=0.054, prop=(0.1, 0.5), length=nozzle_m)


def test_zero_lift_flight_in_constant_wind_keeps_its_air_relative_direction():
    """Closed form of the zero-lift limit: with no gravity, thrust and drag along the air-relative velocity
    u = V - w keep u's direction fixed in a constant wind w (du/dt is parallel to u), so the air-relative
    path r - r_exit - w (t - t_exit) stays on the line of u at rail exit (Galilean change of frame; any
    mechanics text). Checked for the zero-lift flight (thrust along v_air)."""
    veh = Vehicle((_tiny_hobby_stage(),), 0.0)
    site = LaunchSite(rail_length_m=1.0)
    w = 6.0
    fr = fly_vertical(veh, site, with_gravity=False, stop_at="burnout", rtol=1e-11,
                      wind=WindProfile("constant", speed_m_s=w, direction_from_deg=270.0))
    h = fr.history
    t_exit, v_exit = fr.rail_exit_time_s, fr.rail_exit_speed_m_s
    after = h.t_s > t_exit + 1e-6
    air_x = h.east_m[after] - w * (h.t_s[after] - t_exit)
    air_z = h.altitude_m[after] - 1.0
    assert air_z[-1] > 200.0
    np.testing.assert_allclose(air_x / air_z, -w / v_exit, rtol=1e-7)


def test_body_axis_flight_tends_to_the_zero_lift_flight_as_it_aligns_faster():
    """The limit of a body that aligns at once: with a short CP-CG lever (1 cm: the axis lags the relative
    wind by about that travel) and no jet damping (nozzle at the CG), as the pitch inertia shrinks the
    body-axis flight's air-relative direction at burnout tends to the zero-lift closed form above. (With
    jet damping, or a long lever, the axis lags: the limit is a property of the model, not a claim that
    real rockets align at once.)"""
    veh = Vehicle((_tiny_hobby_stage(),), 0.0)
    site = LaunchSite(rail_length_m=1.0)
    wind = WindProfile("constant", speed_m_s=6.0, direction_from_deg=270.0)
    ref = fly_vertical(veh, site, with_gravity=False, stop_at="burnout", wind=wind)
    gaps = []

    def air_angle(fr):
        b = fr.burnouts[0]
        return math.atan2(b.east_m - 6.0 * (b.time_s - fr.rail_exit_time_s), b.altitude_m - 1.0)

    for eps in (1e-3, 1e-4, 1e-5, 1e-6):
        fr = fly_vertical(veh, site, with_gravity=False, stop_at="burnout", wind=wind,
                          stability=[_lag_config(eps, lever_m=0.01)])
        gaps.append(abs(air_angle(fr) - air_angle(ref)))
    assert gaps[0] > gaps[1] > gaps[2] > gaps[3]
    assert gaps[3] < 2e-3 < 0.1 * gaps[0]


def test_calm_vertical_flight_on_the_body_axis_equals_the_zero_lift_flight():
    """Limit: no wind and a vertical rail leave no angle of attack, so the body-axis flight is the
    zero-lift flight (same apogee to the integrator's tolerance, no ground drift)."""
    veh = Vehicle((_tiny_hobby_stage(),), 0.2)
    site = LaunchSite(rail_length_m=1.5)
    cfg = _config(masses=((0.4, 0.2), (0.7, 0.6)), cn=9.0, x_cp=0.62, d=0.054, prop=(0.1, 0.6))
    a = fly_vertical(veh, site)
    b = fly_vertical(veh, site, stability=[cfg])
    assert b.apogee_m == pytest.approx(a.apogee_m, rel=1e-7)
    assert abs(b.end_east_m) < 1e-6 and np.all(b.history.angle_of_attack_deg < 1e-6)


def _windy_setup():
    veh = Vehicle((_tiny_hobby_stage(0.1, 0.3),), 0.9)
    cfg = _config(masses=((0.9, 0.25), (0.3, 0.8)), cn=9.0, x_cp=0.8, d=0.054, prop=(0.1, 0.9))
    site = LaunchSite(rail_length_m=1.0, rail_angle_deg=3.0, azimuth_deg=30.0)
    wind = WindProfile("table", heights_m=(0.0, 50.0, 400.0), speeds_m_s=(3.0, 6.0, 9.0),
                       directions_from_deg=(250.0, 270.0, 300.0))
    return veh, cfg, site, wind


def test_kernel_agrees_with_solve_ivp_on_the_body_axis_equations():
    """Independent integrator: scipy's DOP853 (rtol 1e-13) on the plain-Python right-hand side
    (`derivatives.py_func`) reproduces the kernel's body-axis burnout state in a turning, growing wind,
    released free at 30 m/s with an angle of attack (consistency of the kernel's integration of the
    attitude components)."""
    veh, cfg, site, wind = _windy_setup()
    setup = prepare_flight(veh, site, profile="vertical", earth="flat", stop_at="burnout", wind=wind,
                           stability=[cfg], record_history=False, rtol=1e-11)
    setup.opt[L.OPT_VERTICAL] = 0.0
    setup.y0[2] = 20.0
    setup.y0[3:6] = (3.0, 1.0, 30.0)
    y = _reference_burnouts(setup)[0]
    burn = run_flight(*setup.kernel_args(1))[3][0, L.B_Y:]
    np.testing.assert_allclose(burn[:3], y[:3], rtol=0, atol=1e-5)
    np.testing.assert_allclose(burn[3:6], y[3:6], rtol=0, atol=1e-6)
    np.testing.assert_allclose(burn[L.Y_AXIS:], y[L.Y_AXIS:], rtol=0, atol=1e-6)
    assert abs(np.linalg.norm(burn[L.Y_AXIS:L.Y_AXIS + 3]) - 1.0) < 1e-8  # the axis stays a unit vector


def test_body_axis_budget_closes_and_batch_equals_single_flights():
    """The loss budget closes with the normal force booked as drag loss, and `fly_many` with the same
    stability equals one-by-one flights."""
    veh, cfg, site, wind = _windy_setup()
    one = fly_vertical(veh, site, wind=wind, stability=[cfg], record_history=False)
    assert abs(one.budget_residual_m_s) < 1e-5
    many = fly_many([veh, veh], site, profile="vertical", earth="flat", winds=wind, stabilities=[cfg])
    assert many[0].apogee_m == one.apogee_m and many[1].end_east_m == one.end_east_m


def test_weathercocking_grows_with_the_static_margin():
    """Trend (issue 12 check): the same rocket with its centre of pressure further aft (higher static
    margin, stiffer restoring moment) turns further into the wind, so its apogee lies further upwind;
    the zero-lift flight (a body that aligns at once) turns furthest. Wind from the west, vertical rail."""
    veh = Vehicle((_tiny_hobby_stage(0.1, 0.3),), 0.9)
    site = LaunchSite(rail_length_m=1.0)
    wind = WindProfile("constant", speed_m_s=5.0, direction_from_deg=270.0)
    east = []
    for x_cp in (0.56, 0.62, 0.70, 0.80):  # margins about 1, 2, 3.5, 5 calibers (x_cg 0.50 m, d 54 mm)
        cfg = _config(masses=((0.9, 0.4), (0.3, 0.8)), cn=9.0, x_cp=x_cp, d=0.054, prop=(0.1, 0.5))
        east.append(fly_vertical(veh, site, wind=wind, stability=[cfg]).end_east_m)
    zero_lift = fly_vertical(veh, site, wind=wind).end_east_m
    assert all(e < 0 for e in east)  # upwind = west
    assert east[0] > east[1] > east[2] > east[3] > zero_lift


def test_wind_profile_enters_the_kernel_as_given():
    """`WindProfile` (power law with a cap, a turning table) in the kernel equals its own evaluation."""
    profiles = [WindProfile("power_law", speed_m_s=4.0, direction_from_deg=250.0, top_height_m=300.0),
                WindProfile("constant", speed_m_s=3.0, direction_from_deg=10.0),
                WindProfile("table", heights_m=(5.0, 100.0, 800.0), speeds_m_s=(2.0, 7.0, 12.0),
                            directions_from_deg=(180.0, 270.0, 330.0))]
    veh = Vehicle((_tiny_hobby_stage(),), 0.0)
    for w in profiles:
        setup = prepare_flight(veh, LaunchSite(altitude_m=100.0), profile="vertical", earth="flat", wind=w)
        for h in (2.0, 10.0, 60.0, 250.0, 500.0, 1500.0):
            e, n, z = wind_velocity.py_func(100.0 + h, (0.0, 0.0, 1.0), setup.par)
            assert (e, n) == pytest.approx(w.velocity_m_s(h), abs=1e-12) and z == 0.0


def test_stability_errors_name_the_field():
    veh = Vehicle((_tiny_hobby_stage(),), 0.0)
    cfg = _config()
    with pytest.raises(FieldError, match="stability: needs one configuration per stage"):
        prepare_flight(veh, LaunchSite(), profile="vertical", stability=[cfg, cfg])
    with pytest.raises(FieldError, match="stability: applies to the vertical"):
        prepare_flight(veh, LaunchSite(), profile="ascent", ascent=AscentProfile(), stability=[cfg])


def test_old_wind_class_still_flies_the_same_in_body_mode_and_zero_lift():
    """The kernel's own `Wind` and the equal `WindProfile` give the same flight."""
    veh = Vehicle((_tiny_hobby_stage(),), 0.3)
    site = LaunchSite(rail_length_m=1.0)
    a = fly_vertical(veh, site, wind=Wind(speed_m_s=5.0, from_deg=200.0, exponent=1 / 7))
    b = fly_vertical(veh, site, wind=WindProfile("power_law", speed_m_s=5.0, direction_from_deg=200.0))
    assert a.apogee_m == pytest.approx(b.apogee_m, rel=1e-12)
    assert a.end_east_m == pytest.approx(b.end_east_m, rel=1e-9)
