"""Steering of a given vehicle optimised for end conditions (direct shooting on a pitch table).

`optimise_pitch_programme` finds the pitch programme (pitch above the local
horizontal at evenly spaced nodes of the steered burn, interpolated linearly in
time) that maximises the final speed along the local horizontal subject to a
final altitude and a zero vertical (radial) speed, by
`sizing.optimize.shooting.solve_shooting` with replayed-step Jacobians. It is
the steering half of `sizing.optimize.orbit_sizing` without the masses, and it
is how the project checks its steering optimiser against the linear tangent
law, the optimum for a flat Earth with constant gravity and no air (Bryson &
Ho, Applied Optimal Control, 1975, Sec. 2.7).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sizing.optimize.shooting import find_feasible, solve_shooting
from sizing.physics.flight import AscentProfile
from sizing.physics.flight import layout as L
from sizing.physics.flight.kernel import run_flight
from sizing.physics.flight.setup import burn_schedule, prepare_flight, replay_steps
from sizing.physics.vehicle import LaunchSite, Vehicle

__all__ = ["PitchProgrammeResult", "optimise_pitch_programme"]


@dataclass(frozen=True, slots=True)
class PitchProgrammeResult:
    """Optimised programme: node times [s] and pitch [deg], the profile, and the end state."""

    times_s: np.ndarray
    pitch_deg: np.ndarray
    profile: AscentProfile
    success: bool
    message: str
    final_altitude_m: float
    final_vertical_speed_m_s: float
    final_horizontal_speed_m_s: float
    n_flights: int


def _end_state(y: np.ndarray, round_earth: bool, radius_m: float) -> tuple[float, float, float]:
    """(altitude [m], vertical speed [m/s], horizontal speed [m/s]) of an inertial state."""
    r, v = y[0:3], y[3:6]
    if round_earth:
        rn = float(np.linalg.norm(r))
        vr = float(r @ v) / rn
        return rn - radius_m, vr, math.sqrt(max(0.0, float(v @ v) - vr * vr))
    return float(r[2]), float(v[2]), math.hypot(float(v[0]), float(v[1]))


def optimise_pitch_programme(vehicle: Vehicle, site: LaunchSite, target_altitude_m: float, *, nodes: int = 12,
                             earth: str = "round", rotating: bool = True, with_drag: bool = True,
                             vertical_rise_s: float = 10.0, pitch_kick_deg: float = 2.0,
                             kick_duration_s: float = 10.0, steer_from_start: bool = False,
                             max_iterations: int = 60, rtol: float = 1e-9) -> PitchProgrammeResult:
    """Pitch programme of a fixed vehicle for the largest horizontal speed at final burnout.

    End conditions at final burnout: altitude `target_altitude_m` [m] above
    sea level and zero vertical speed. The programme runs from the second
    stage's ignition (or, with `steer_from_start`, from t = 0: no vertical
    rise or kick, the first stage steered too) to final burnout, with `nodes`
    evenly spaced nodes.
    """
    sched = burn_schedule(vehicle, ignore_first_coast=True)
    if steer_from_start:
        vertical_rise_s, kick_duration_s, pitch_kick_deg = 0.0, 1e-6, 0.0
    k = 0 if (steer_from_start or len(vehicle.stages) == 1) else 1
    t0 = sched.windows[k][0] if k > 0 else vertical_rise_s + kick_duration_s
    t1 = sched.windows[-1][1]
    times = np.linspace(t0, t1, nodes)
    round_ = earth == "round"
    scale_deg = 30.0

    def profile(z) -> AscentProfile:
        return AscentProfile(vertical_rise_s=vertical_rise_s, pitch_kick_deg=pitch_kick_deg,
                             kick_duration_s=kick_duration_s, steering="table",
                             steer_from_stage=vehicle.stages[k].name,
                             pitch_table=tuple(zip(times.tolist(), (np.asarray(z) * scale_deg).tolist())))

    def fly(z, steps):
        setup = prepare_flight(vehicle, site, profile="ascent", ascent=profile(z), earth=earth,
                               rotating=rotating and round_, with_drag=with_drag, stop_at="burnout",
                               record_history=False, detect_impact=False, rtol=rtol)
        if steps is not None:
            setup = replay_steps(setup, steps) or setup
        out, y, *_rest, rec = run_flight(*setup.kernel_args(1))
        alt, vr, vh = _end_state(y, round_, float(setup.par[L.ENV_RADIUS]))
        token = rec[: int(out[L.OUT_N_STEPREC])].copy() if (steps is None and out[L.OUT_N_STEPREC] > 0) else None
        return np.array([-vh / 1000.0, (alt - target_altitude_m) / 1000.0, vr]), token

    z0 = np.linspace(45.0, 0.0, nodes) / scale_deg
    lo, hi = np.full(nodes, -80.0 / scale_deg), np.full(nodes, 85.0 / scale_deg)
    z0, n_fl = find_feasible(fly, z0, lo, hi, n_eq=2)
    res = solve_shooting(fly, z0, lo, hi, n_eq=2, eq_tol=1e-3, max_iterations=max_iterations, step=1e-6,
                         stall_tol=1e-9, stall_iterations=8)
    g = res.outputs
    return PitchProgrammeResult(times_s=times, pitch_deg=res.z * scale_deg, profile=profile(res.z),
                                success=res.success, message=res.message,
                                final_altitude_m=target_altitude_m + 1000.0 * g[1], final_vertical_speed_m_s=g[2],
                                final_horizontal_speed_m_s=-1000.0 * g[0], n_flights=n_fl + res.n_flights)
