"""Thrust direction laws (compiled): rail, vertical rise, pitch kick, zero-lift turn, pitch programmes, body axis.

Pitch programmes give the pitch angle theta of the thrust above the local
horizontal; the thrust then lies in a vertical plane chosen by the plane mode:

* 0, velocity plane: the horizontal part of the inertial velocity;
* 1, fixed inertial plane: the horizontal direction in a plane with a given
  normal (the target orbit plane through the site at t = 0);
* 2, inclination hold: the inertial azimuth beta of an orbit of inclination i
  through the current point, sin(beta) = cos(i) / cos(latitude) (spherical
  trigonometry of the ground track; Curtis, Orbital Mechanics for Engineering
  Students, 3rd ed., 2014, Sec. 4.7, from memory), northbound or southbound,
  plus a yaw bias that the optimiser may set.

Pitch laws: linear tangent, tan(theta) linear in time (the optimal law for a
flat Earth, constant gravity and no drag; Bryson & Ho, Applied Optimal
Control, 1975, Sec. 2.7); pitch rate, theta linear in time; a table of
(time, theta) interpolated linearly (what the ascent optimiser writes and a
design file carries); a constant pitch per phase.
"""

from __future__ import annotations

import math

from sizing.physics._jit import njit
from sizing.physics.flight.layout import (
    ENV_AZ0, ENV_RAIL, ENV_ROUND, MODE_BODY, MODE_FIXED, MODE_KICK, MODE_LINEAR_TANGENT, MODE_PROGRADE, Y_AXIS,
    MODE_TABLE, MODE_UP, ST_ASCENDING, ST_COS_INC, ST_KICK_COS, ST_KICK_SIN, ST_PLANE_MODE, ST_PLANE_N,
    ST_SPAN, ST_T_START, ST_TAN0, ST_TANF, ST_TH0, ST_THF, ST_YAW_BIAS, TB_PITCH_N, TB_PITCH_OFF,
)

__all__ = ["pitch_angle", "plane_direction", "thrust_direction", "table_pair_value", "table_slice_value"]


@njit(inline=True)
def table_slice_value(ts, vs, off, n, t, shift):
    """Linear interpolation in ts[off:off+n] -> vs[off+shift:off+shift+n] (ts increasing), held at the ends.

    Works on offsets, without slicing (a slice is a new array reference in compiled code).
    """
    if t <= ts[off]:
        return vs[off + shift]
    if t >= ts[off + n - 1]:
        return vs[off + n - 1 + shift]
    lo, hi = off, off + n - 1
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if ts[mid] <= t:
            lo = mid
        else:
            hi = mid
    return vs[lo + shift] + (vs[hi + shift] - vs[lo + shift]) * (t - ts[lo]) / (ts[hi] - ts[lo])


@njit(inline=True)
def table_pair_value(par, off, n, x):
    """Interpolate a table stored as n abscissae at par[off:off+n] then n values after them."""
    if n == 1:
        return par[off + 1]
    return table_slice_value(par, par, off, n, x, n)


@njit(inline=True)
def pitch_angle(mode, t, par, fixed_pitch):
    """Pitch of the thrust above the local horizontal [rad] for a pitch-programme mode."""
    if mode == MODE_TABLE:
        off, n = int(par[TB_PITCH_OFF]), int(par[TB_PITCH_N])
        return table_pair_value(par, off, n, t)
    if mode == MODE_FIXED:
        return fixed_pitch
    frac = (t - par[ST_T_START]) / par[ST_SPAN]
    if mode == MODE_LINEAR_TANGENT:
        return math.atan(par[ST_TAN0] + (par[ST_TANF] - par[ST_TAN0]) * frac)
    return par[ST_TH0] + (par[ST_THF] - par[ST_TH0]) * frac  # MODE_PITCH_RATE


@njit(inline=True)
def plane_direction(y, up, par):
    """Unit horizontal direction of the steering plane at the current point (see module notes)."""
    ux, uy, uz = up
    mode = par[ST_PLANE_MODE]
    if mode == 1.0:
        nx, ny, nz = par[ST_PLANE_N], par[ST_PLANE_N + 1], par[ST_PLANE_N + 2]
        hx, hy, hz = ny * uz - nz * uy, nz * ux - nx * uz, nx * uy - ny * ux
    elif mode == 2.0 and par[ENV_ROUND] > 0.0:
        rxy = math.sqrt(ux * ux + uy * uy)
        ex, ey = -uy / rxy, ux / rxy  # east (ez = 0)
        nx, ny, nz = -uz * ey, uz * ex, ux * ey - uy * ex  # north = up x east
        s = par[ST_COS_INC] / rxy  # cos(latitude) = rxy
        s = min(1.0, max(-1.0, s))
        beta = math.asin(s)
        if par[ST_ASCENDING] == 0.0:
            beta = math.pi - beta
        beta += par[ST_YAW_BIAS]
        cb, sb = math.cos(beta), math.sin(beta)
        hx, hy, hz = cb * nx + sb * ex, cb * ny + sb * ey, cb * nz
    else:
        vx, vy, vz = y[3], y[4], y[5]
        vu = vx * ux + vy * uy + vz * uz
        hx, hy, hz = vx - vu * ux, vy - vu * uy, vz - vu * uz
    hn = math.sqrt(hx * hx + hy * hy + hz * hz)
    if hn > 0.0:
        return hx / hn, hy / hn, hz / hn
    return par[ENV_AZ0], par[ENV_AZ0 + 1], par[ENV_AZ0 + 2]


@njit(inline=True)
def thrust_direction(mode, t, y, up, vhat, has_vel, on_rail, par, fixed_pitch):
    """Unit thrust direction in the inertial frame.

    `vhat` is the unit air-relative velocity (valid when `has_vel`); on the
    rail the thrust is along the rail; in MODE_BODY along the body axis (a
    state, `equations`). `par` is the flight's parameter array (`layout`).
    """
    if on_rail:
        return par[ENV_RAIL], par[ENV_RAIL + 1], par[ENV_RAIL + 2]
    if mode == MODE_BODY:
        bx, by, bz = y[Y_AXIS], y[Y_AXIS + 1], y[Y_AXIS + 2]
        ib = 1.0 / math.sqrt(bx * bx + by * by + bz * bz)
        return bx * ib, by * ib, bz * ib
    if mode == MODE_PROGRADE:
        if has_vel:
            return vhat
        return par[ENV_RAIL], par[ENV_RAIL + 1], par[ENV_RAIL + 2]
    ux, uy, uz = up
    if mode == MODE_UP:
        return ux, uy, uz
    if mode == MODE_KICK:
        # the site's azimuth direction turned into the current local horizontal
        ax, ay, az = par[ENV_AZ0], par[ENV_AZ0 + 1], par[ENV_AZ0 + 2]
        d = ax * ux + ay * uy + az * uz
        hx, hy, hz = ax - d * ux, ay - d * uy, az - d * uz
        hn = math.sqrt(hx * hx + hy * hy + hz * hz)
        c, s = par[ST_KICK_COS], par[ST_KICK_SIN]
        return c * ux + s * hx / hn, c * uy + s * hy / hn, c * uz + s * hz / hn
    th = pitch_angle(mode, t, par, fixed_pitch)
    hx, hy, hz = plane_direction(y, up, par)
    c, s = math.cos(th), math.sin(th)
    return c * hx + s * ux, c * hy + s * uy, c * hz + s * uz
