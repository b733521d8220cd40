"""Steering an ascent to a target: the pitch programme that meets the end conditions.

`target_burnout` solves the pitch kick and the upper-stage law of an
`AscentProfile` so that final burnout happens at a target altitude with zero
inertial flight-path angle (the flight itself is `sizing.physics.flight`).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from sizing.physics.flight import AscentProfile, FlightResult, fly_ascent
from sizing.physics.vehicle import LaunchSite, Vehicle

__all__ = ["target_burnout"]

_PITCH0_BOUNDS_DEG = (-5.0, 75.0)
_PITCHF_BOUNDS_DEG = (-30.0, 45.0)


def _burnout_residual(res: FlightResult, target_alt_m: float) -> tuple[float, float]:
    o = res.orbit
    if o is None:  # crashed: a large, still-continuous penalty
        last_alt = float(res.history.altitude_m[-1]) if len(res.history.t_s) else 0.0
        return (last_alt - target_alt_m - 1e5, -90.0)
    return (o.altitude_m - target_alt_m, o.flight_path_angle_deg)


def target_burnout(vehicle: Vehicle, site: LaunchSite, profile: AscentProfile, target_altitude_m: float, *,
                   rotating: bool = True, with_drag: bool = True, max_step_s: float | None = None,
                   record_history: bool = True, acceleration_limit_m_s2: float | None = None,
                   max_evaluations: int = 60, optimize_kick: bool = True) -> FlightResult:
    """Fly the ascent with its programme solved for burnout at `target_altitude_m` with gamma = 0.

    Steered profiles: for a given pitch kick, the steering law's initial and
    final pitch are solved with scipy.optimize.least_squares for the two end
    conditions (altitude, zero inertial flight-path angle). Without a warm
    start (`profile.initial_pitch_deg` None) a few kicks around the given one
    are tried and the fastest feasible kept. With `optimize_kick`, the three
    parameters are then polished with SLSQP (scipy.optimize.minimize),
    maximising the inertial burnout speed subject to the two end conditions.
    Gravity-turn-only profiles have one free parameter (the kick), fitted in
    the least-squares sense. `max_evaluations` bounds the trajectories of each
    solve. `targeting_residual` of the result is (altitude error [m],
    flight-path angle [deg]).
    """
    def run(p, hist, impact=True):
        return fly_ascent(vehicle, site, p, rotating=rotating, with_drag=with_drag, max_step_s=max_step_s,
                          record_history=hist, acceleration_limit_m_s2=acceleration_limit_m_s2,
                          detect_impact=impact)

    res, p_best, resid = _target_ascent(run, profile, float(target_altitude_m), max_evaluations, optimize_kick)
    if record_history:
        res = run(p_best, True)
    return replace(res, targeting_residual=resid)


def _target_ascent(run, profile: AscentProfile, target: float, max_eval: int, optimize_kick: bool = True):
    from scipy.optimize import least_squares, minimize

    steer = profile.steering != "gravity_turn"
    scale_alt = 1.0e4  # 10 km of altitude error ~ 1 deg of flight-path angle
    memo: dict[tuple, tuple] = {}

    def evaluate(kick, th0=None, thf=None):
        key = (float(kick), th0 if th0 is None else float(th0), thf if thf is None else float(thf))
        if key in memo:
            return memo[key]
        kw = {"pitch_kick_deg": min(max(key[0], 0.0), 60.0)}
        if steer:
            kw["initial_pitch_deg"] = key[1]
            kw["final_pitch_deg"] = key[2]
        p = replace(profile, **kw)
        res = run(p, False, False)
        ra, rg = _burnout_residual(res, target)
        out = (np.array([ra / scale_alt, rg]), res, p)
        memo[key] = out
        return out

    def feasible(out) -> bool:
        r, res, _ = out
        return res.terminated_by == "burnout" and abs(r[0]) * scale_alt < 1.0 and abs(r[1]) < 1e-3

    def norm2(out) -> float:
        return float(np.sum(out[0] ** 2))

    def pack(out):
        r, res, p = out
        return res, p, (float(r[0] * scale_alt), float(r[1]))

    if not steer:
        best = min((0.5, 1.0, 2.0, 4.0, 8.0), key=lambda k: norm2(evaluate(k)))
        least_squares(lambda x: evaluate(x[0])[0], [best], bounds=([0.0], [60.0]),
                      diff_step=1e-6, max_nfev=max_eval)
        return pack(min(memo.values(), key=norm2))

    lb = [_PITCH0_BOUNDS_DEG[0], _PITCHF_BOUNDS_DEG[0]]
    ub = [_PITCH0_BOUNDS_DEG[1], _PITCHF_BOUNDS_DEG[1]]

    def inner(kick: float, x0) -> tuple:
        x0 = np.clip(np.asarray(x0, dtype=float), lb, ub)
        least_squares(lambda x: evaluate(kick, x[0], x[1])[0], x0, bounds=(lb, ub),
                      diff_step=1e-6, x_scale=[5.0, 5.0], xtol=1e-9, ftol=1e-10, gtol=1e-10,
                      max_nfev=max_eval)
        cands = [v for k, v in memo.items() if k[0] == float(kick) and k[1] is not None]
        return min(cands, key=norm2)

    def guess_pitch0(kick: float) -> float:
        h = run(replace(profile, pitch_kick_deg=kick, initial_pitch_deg=None), True).history
        idx = np.flatnonzero(h.stage_index == h.stage_index[-1])
        return float(h.flight_path_angle_deg[idx[0]]) if idx.size else 20.0

    k0 = profile.pitch_kick_deg if profile.pitch_kick_deg > 0 else 1.0
    best = None
    if profile.initial_pitch_deg is not None:
        out = inner(k0, (profile.initial_pitch_deg, profile.final_pitch_deg))
        if feasible(out):
            best = out
    if best is None:
        kicks = [0.5 * k0, k0, 2.0 * k0]
        for _attempt in range(2):
            for k in kicks:
                out = inner(k, (guess_pitch0(k), 0.0))
                if feasible(out) and (best is None or
                                      out[1].final_inertial_speed_m_s > best[1].final_inertial_speed_m_s):
                    best = out
            if best is not None:
                break
            kicks = [k for k in (0.25, 1.0, 4.0, 8.0, 16.0) if k not in kicks]
    if best is None:
        return pack(min(memo.values(), key=norm2))
    if optimize_kick:
        p = best[2]
        x1 = np.array([p.pitch_kick_deg, p.initial_pitch_deg, p.final_pitch_deg])

        def obj(x):
            out = evaluate(*x)
            return -out[1].final_inertial_speed_m_s / 1000.0 if out[1].terminated_by == "burnout" else 10.0

        try:
            minimize(obj, x1, method="SLSQP",
                     constraints=[{"type": "eq", "fun": lambda x: evaluate(*x)[0]}],
                     bounds=[(0.0, 45.0), tuple(_PITCH0_BOUNDS_DEG), tuple(_PITCHF_BOUNDS_DEG)],
                     options={"maxiter": 30, "ftol": 1e-9, "eps": 1e-6})
        except (ValueError, FloatingPointError):  # pragma: no cover - keep the inner answer
            pass
        feas = [v for v in memo.values() if v[2].initial_pitch_deg is not None and feasible(v)]
        best = max(feas, key=lambda v: v[1].final_inertial_speed_m_s)
    return pack(best)
