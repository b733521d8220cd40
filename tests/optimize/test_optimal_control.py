"""The direct-shooting optimisers against published optimal-control results."""

from __future__ import annotations

import math

import numpy as np
import pytest

from sizing.optimize.ascent import optimise_pitch_programme
from sizing.optimize.throttle import optimise_thrust_programme
from sizing.physics.vehicle import DragCurve, FlightStage, LaunchSite, Vehicle


def test_steering_recovers_the_linear_tangent_law():
    """Flat Earth, constant gravity, no air, constant thrust: the steering that maximises the final
    horizontal speed at a given altitude with zero vertical speed has tan(theta) linear in time
    (the linear tangent law; Bryson & Ho, Applied Optimal Control, 1975, Sec. 2.7). The optimiser,
    free to place 16 pitch nodes anywhere, lands within 1e-3 rad of the best atan(a + b t) (issue
    requirement)."""
    st = FlightStage("s", 8000.0, 1000.0, 300.0, diameter_m=2.0, thrust_vac_n=2.0 * 10000.0 * 9.80665)
    r = optimise_pitch_programme(Vehicle((st,), 1000.0), LaunchSite(), 30e3, nodes=16, earth="flat",
                                 rotating=False, with_drag=False, steer_from_start=True)
    assert r.success, r.message
    assert r.final_altitude_m == pytest.approx(30e3, abs=1.0)
    assert abs(r.final_vertical_speed_m_s) < 1e-3
    th = np.radians(r.pitch_deg)
    A = np.vstack([np.ones_like(r.times_s), r.times_s]).T
    coef, *_ = np.linalg.lstsq(A, np.tan(th), rcond=None)
    assert np.max(np.abs(np.arctan(A @ coef) - th)) < 1e-3
    assert coef[1] < 0  # the thrust tilts down as the vehicle gains speed


def test_thrust_programme_reproduces_the_goddard_benchmark():
    """Goddard's maximum-altitude rocket in the COPS 3.0 benchmark set (Dolan, More & Munson,
    Benchmarking Optimization Software with COPS 3.0, ANL/MCS-TM-273, 2004): h0 = m0 = g0 = 1,
    h_c = 500, v_c = 620, m_c = 0.6, T_max = 3.5, c = 0.5 sqrt(g0 h0), drag D_c v^2 exp(-h_c (h - h0)
    / h0) with D_c = 0.5 v_c m0 / g0, gravity g0 (h0/h)^2. Optimal final altitude 1.01283 (from memory
    of the published table). Mapped to SI with h0 the Earth radius: exponential atmosphere of scale
    height h0/500, a central body with GM = g0 h0^2, C_D A = 1 m^2, m0 = 1 kg."""
    R, g0, m0 = 6378137.0, 9.80665, 1.0
    st = FlightStage("goddard", 0.4, 0.6, 100.0, diameter_m=math.sqrt(4.0 / math.pi), thrust_vac_n=1.0,
                     drag=DragCurve.constant(1.0))
    r = optimise_thrust_programme(st, 0.0, LaunchSite(), max_thrust_n=3.5 * m0 * g0,
                                  exhaust_velocity_m_s=0.5 * math.sqrt(g0 * R), nodes=20,
                                  atmosphere=("exponential", 2.0 * 310.0 * m0 / R, R / 500.0, g0 * R * R, R))
    assert r.success, r.message
    assert 1.0 + r.apogee_m / R == pytest.approx(1.01283, abs=2e-5)
    # the optimum starts at full thrust and then throttles back (the singular arc)
    assert r.thrust_n[0] == pytest.approx(3.5 * g0, rel=1e-6)
    assert min(r.thrust_n[5:15]) < 0.9 * 3.5 * g0
