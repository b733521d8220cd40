"""The compiled flight kernel against its tableau's sources, an independent integrator and a closed form."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from sizing.physics.flight import AscentProfile, Wind, fly_vertical
from sizing.physics.flight import layout as L
from sizing.physics.flight import tableau
from sizing.physics.flight.equations import derivatives
from sizing.physics.flight.kernel import run_flight
from sizing.physics.flight.setup import prepare_flight
from sizing.physics.vehicle import DragCurve, FlightStage, FlightStageSpec, LaunchSite, Vehicle, build_vehicle


def test_tableau_matches_scipy_rk45_and_order_conditions():
    """Dormand & Prince, J. Comput. Appl. Math. 6 (1980), Table 2, as printed in Hairer, Norsett &
    Wanner, Solving ODEs I, 2nd ed., Table 5.2: the coefficients equal scipy's copy
    (scipy.integrate._ivp.rk.RK45, a general-purpose reference library), the rows of A sum to C,
    and the 5th-order weights meet the order conditions up to order 5 (Hairer et al. Sec. II.2)."""
    from scipy.integrate._ivp.rk import RK45

    A, B, C, E = tableau.A, tableau.B, tableau.C, tableau.E
    np.testing.assert_allclose(A[:6, :5], RK45.A, rtol=0, atol=1e-15)
    np.testing.assert_allclose(B[:6], RK45.B, rtol=0, atol=1e-15)
    np.testing.assert_allclose(C[:6], RK45.C, rtol=0, atol=1e-15)
    np.testing.assert_allclose(E, -RK45.E, rtol=0, atol=1e-15)  # scipy stores b* - b
    np.testing.assert_allclose(tableau.P, RK45.P, rtol=0, atol=1e-15)
    np.testing.assert_allclose(A.sum(axis=1), C, atol=1e-15)
    b, c = B, C
    assert b.sum() == pytest.approx(1.0, abs=1e-15)
    for k in range(1, 5):  # bushy-tree conditions sum b_i c_i^k = 1/(k+1)
        assert b @ c**k == pytest.approx(1.0 / (k + 1), abs=1e-14)
    assert b @ (A @ c) == pytest.approx(1.0 / 6.0, abs=1e-14)
    assert b @ (A @ c**2) == pytest.approx(1.0 / 12.0, abs=1e-14)
    assert b @ (c * (A @ c)) == pytest.approx(1.0 / 8.0, abs=1e-14)
    assert b @ (A @ (A @ c)) == pytest.approx(1.0 / 24.0, abs=1e-14)
    # the embedded 4th-order weights b* = b - e also sum to one
    assert (b - E).sum() == pytest.approx(1.0, abs=1e-15)


SPECS = [
    FlightStageSpec("booster", 310.0, 0.07, 1.5, diameter_m=3.7, isp_sl_s=280.0),
    FlightStageSpec("sustainer", 345.0, 0.09, 1.1, diameter_m=3.7, isp_sl_s=300.0),
]
MP, MS = [83231.65, 12212.04], [6264.76, 1207.79]


def _reference_burnouts(setup, on_rail=False):
    """Integrate the same equations (the plain-Python `derivatives.py_func`) with scipy's DOP853
    phase by phase, applying the same staging mass drops; states at each burnout."""
    y = setup.y0.copy()
    out = {}

    def rhs(t, yy, ph):
        dy, dg = np.zeros(L.N_STATE), np.zeros(L.N_DIAG)
        derivatives.py_func(t, yy, dy, dg, setup.par, ph, on_rail)
        return dy

    steer = setup.par
    for ph in setup.phases:
        if not math.isfinite(ph[L.PH_T1]):
            break
        mode = int(ph[L.PH_MODE])
        if mode == L.MODE_LINEAR_TANGENT and abs(ph[L.PH_T0] - steer[L.ST_T_START]) < 1e-9 and not steer[
                L.ST_TH0_GIVEN]:
            raise AssertionError("give initial_pitch_deg in oracle tests")
        sol = solve_ivp(rhs, (ph[L.PH_T0], ph[L.PH_T1]), y, method="DOP853", rtol=1e-13, atol=1e-9, args=(ph,))
        y = sol.y[:, -1].copy()
        if ph[L.PH_BURNOUT_OF] >= 0:
            out[int(ph[L.PH_BURNOUT_OF])] = y.copy()
            y[6] = ph[L.PH_MASS_AFTER]
    return out


def test_kernel_agrees_with_solve_ivp_on_the_same_equations():
    """Independent integrator: scipy.integrate.solve_ivp (DOP853, rtol 1e-13) on the plain-Python
    form of the same right-hand side reproduces the compiled kernel's burnout states of a
    two-stage drag-and-rotation ascent with linear-tangent steering to 1e-9 relative (issue
    requirement; consistency of the kernel's integrator, events and kink handling)."""
    v = build_vehicle(SPECS, MP, MS, 5000.0)
    site = LaunchSite(latitude_deg=28.5, azimuth_deg=90.0)
    prof = AscentProfile(pitch_kick_deg=6.5, initial_pitch_deg=20.3, final_pitch_deg=-8.1)
    setup = prepare_flight(v, site, profile="ascent", ascent=prof, rotating=True, stop_at="burnout",
                           record_history=False, rtol=1e-12)
    ref = _reference_burnouts(setup)
    burn = run_flight(*setup.kernel_args(1))[3]
    for i in (0, 1):
        y = burn[i, L.B_Y:]
        r_ref, v_ref = ref[i][:3], ref[i][3:6]
        assert np.linalg.norm(y[:3] - r_ref) <= 1e-9 * np.linalg.norm(r_ref)
        assert np.linalg.norm(y[3:6] - v_ref) <= 1e-9 * np.linalg.norm(v_ref)
        # loss integrals ride along outside the error norm: 10 um/s
        np.testing.assert_allclose(y[7:12], ref[i][7:12], rtol=1e-8, atol=1e-5)


def test_kernel_error_falls_with_tolerance_against_solve_ivp():
    """The same oracle at the default tolerance: burnout position within 1 m and speed within
    1 mm/s (the benchmark's 'same answer'), and tighter at rtol 1e-10."""
    v = build_vehicle(SPECS, MP, MS, 5000.0)
    site = LaunchSite(latitude_deg=5.0, azimuth_deg=90.0)
    prof = AscentProfile(pitch_kick_deg=6.5, initial_pitch_deg=20.3, final_pitch_deg=-8.1)
    errs = []
    for rtol in (1e-8, 1e-10):
        setup = prepare_flight(v, site, profile="ascent", ascent=prof, rotating=True, stop_at="burnout",
                               record_history=False, rtol=rtol)
        ref = _reference_burnouts(setup)[1]
        y = run_flight(*setup.kernel_args(1))[3][1, L.B_Y:]
        errs.append((np.linalg.norm(y[:3] - ref[:3]), np.linalg.norm(y[3:6] - ref[3:6])))
    assert errs[0][0] < 1.0 and errs[0][1] < 1e-3
    assert errs[1][0] < errs[0][0] and errs[1][1] < errs[0][1]


def test_drag_pulls_a_body_up_to_the_wind_speed_closed_form():
    """Quadratic drag in a constant horizontal wind, no gravity, no thrust after a negligible
    burn: du/dt = k (w - u)^2 with k = rho C_D A / (2 m) has the closed form
    u(t) = w - 1 / (1/w + k t) (separable ODE; any calculus text). Checks that the wind enters
    the air-relative velocity of the drag term."""
    from sizing.physics.atmosphere import atmosphere

    w_speed, cd, d, mass = 10.0, 0.5, 0.2, 10.0
    st = FlightStage("s", 1e-9, mass, 200.0, diameter_m=d, thrust_vac_n=1e-3, drag=DragCurve.constant(cd))
    veh = Vehicle((st,), 0.0)
    wind = Wind(speed_m_s=w_speed, from_deg=270.0)  # blows towards the east (+x of the flat frame)
    setup = prepare_flight(veh, LaunchSite(), profile="vertical", earth="flat", with_gravity=False, stop_at="impact", wind=wind,
                           max_step_s=0.5, rtol=1e-10)
    setup.y0[2] = 100.0  # released 100 m above the site, where the wind blows
    setup.opt[L.OPT_VERTICAL] = 0.0  # no rail: free from t = 0
    setup.opt[L.OPT_MAX_TIME] = 60.0
    out, y, _, _, hist, _ = run_flight(*setup.kernel_args(4096))
    h = hist[: int(out[L.OUT_N_HIST])]
    t, u = h[:, L.H_T], h[:, L.H_VX]

    rho = atmosphere(100.0).density_kg_m3
    k = rho * cd * math.pi * d * d / 4.0 / (2.0 * mass)
    expected = w_speed - 1.0 / (1.0 / w_speed + k * t)
    # the 2 ms micro-burn adds 2e-7 m/s
    np.testing.assert_allclose(u[t > 1.0], expected[t > 1.0], rtol=1e-6, atol=5e-7)
    assert abs(h[-1, L.H_Z] - 100.0) < 1e-6  # no vertical force


def test_wind_turns_a_zero_lift_rocket_into_the_wind():
    """Weathercocking of a very stable (zero angle of attack) rocket: with the wind from the west,
    a vertical launch drifts west at apogee (physical trend; consistency check, no external source)."""
    d = DragCurve.default_slender_body()
    s = FlightStage("motor", 0.3, 0.9, 180.0, diameter_m=0.054, drag=d,
                    thrust_curve=((0.0, 0.05, 1.4, 1.5), (0.0, 400.0, 320.0, 0.0)))
    veh = Vehicle((s,), 0.5)
    site = LaunchSite(rail_length_m=2.0)
    calm = fly_vertical(veh, site)
    windy = fly_vertical(veh, site, wind=Wind(speed_m_s=6.0, from_deg=270.0, exponent=1.0 / 7.0))
    assert windy.apogee_m < calm.apogee_m
    assert windy.history.downrange_m[-1] > 10.0


def test_public_flight_api_lists_its_names():
    import sizing.physics.flight as flight

    for name in flight.__all__:
        assert hasattr(flight, name), name


def test_coast_and_insertion_burn_fly_a_hohmann_transfer():
    """Hohmann transfer from a 300 km to an 800 km circular orbit (Curtis, Orbital Mechanics for
    Engineering Students, 3rd ed., Sec. 6.2: dv1 = sqrt(GM(2/r1 - 1/a)) - sqrt(GM/r1), dv2 =
    sqrt(GM/r2) - sqrt(GM(2/r2 - 1/a)), transfer time pi sqrt(a^3/GM); from memory), flown as a
    first burn, a coast and an insertion restart with the propellant from the rocket equation:
    the final orbit is circular at 800 km within 0.5 km (short, high-thrust burns)."""
    import math

    from sizing.physics.flight.profiles import InsertionBurn
    from sizing.units import GM_EARTH_M3_S2, R_EARTH_EQ_M

    mu = GM_EARTH_M3_S2
    r1, r2 = R_EARTH_EQ_M + 300e3, R_EARTH_EQ_M + 800e3
    a = 0.5 * (r1 + r2)
    dv1 = math.sqrt(mu * (2 / r1 - 1 / a)) - math.sqrt(mu / r1)
    dv2 = math.sqrt(mu / r2) - math.sqrt(mu * (2 / r2 - 1 / a))
    isp, dry = 320.0, 500.0
    c = isp * 9.80665
    m2 = dry * (math.exp(dv2 / c) - 1.0)
    m1 = (dry + m2) * (math.exp(dv1 / c) - 1.0)
    thrust = 20.0 * (dry + m1 + m2) * 9.80665
    st = FlightStage("tug", m1 + m2, dry, isp, diameter_m=1.0, thrust_vac_n=thrust)
    veh = Vehicle((st,), 0.0)
    tb1, tb2 = m1 * c / thrust, m2 * c / thrust
    coast = math.pi * math.sqrt(a ** 3 / mu) - 0.5 * tb1 - 0.5 * tb2
    prof = AscentProfile(vertical_rise_s=0.0, pitch_kick_deg=0.0, kick_duration_s=1e-6, steering="table",
                         steer_from_stage="tug", pitch_table=((0.0, 0.0), (tb1, 0.0)),
                         insertion=InsertionBurn(coast, 0.0, m2))
    setup = prepare_flight(veh, LaunchSite(), profile="ascent", ascent=prof, rotating=False, with_drag=False,
                           stop_at="burnout", record_history=False, rtol=1e-10)
    setup.y0[0:3] = (r1, 0.0, 0.0)
    setup.y0[3:6] = (0.0, math.sqrt(mu / r1), 0.0)
    y = run_flight(*setup.kernel_args(1))[1]
    orbit = setup.frame.orbit(y)
    assert orbit.perigee_alt_m == pytest.approx(800e3, abs=500.0)
    assert orbit.apogee_alt_m == pytest.approx(800e3, abs=500.0)


def test_compile_note_sees_only_this_checkouts_cache(tmp_path):
    """The first-flight compile note (README promise): another checkout's cached kernel (numba files
    each source folder under its own hashed name) does not count as this one's."""
    import hashlib
    from pathlib import Path

    import sizing.physics._jit as jit

    flight = Path(jit.__file__).resolve().parent / "flight"
    other = tmp_path / f"flight_{hashlib.sha1(b'/elsewhere/sizing/physics/flight').hexdigest()}"
    other.mkdir()
    (other / "kernel.run_flight-474.py311.nbi").write_bytes(b"")
    assert not jit.cache_is_warm(tmp_path)
    mine = tmp_path / f"flight_{hashlib.sha1(str(flight).encode()).hexdigest()}"
    mine.mkdir()
    (mine / "kernel.run_flight-474.py311.nbi").write_bytes(b"")
    assert jit.cache_is_warm(tmp_path)
