"""Equations of motion of a point mass with changing mass: the one set, compiled.

In an inertial frame (Earth-centred for a round Earth, a local frame for the
flat-Earth option) the vehicle is a point of mass m(t):

    dr/dt = V,
    m dV/dt = F u_T - D v_hat_air + m g(r),
    dm/dt = -mdot(t),

where F = F_vac - p_a A_e is the delivered thrust (momentum flux of the exhaust
plus the pressure thrust; Sutton & Biblarz, Rocket Propulsion Elements, 9th
ed., 2017, eq. 2-14), u_T the thrust direction (`steering`), D = q C_D(M) S the
drag along the air-relative velocity v_air = V - omega x r - w(h) (w: the wind,
horizontal), and g the gravity, inverse-square -GM r / r^3 on the round Earth or
a constant g0 on the flat Earth. The exhaust carries its momentum away: there
is no "v dm/dt" term (Tsiolkovsky rocket equation; Sutton & Biblarz, Sec. 4.1
and eq. 4-6; Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014,
Sec. 11.3). In free space this integrates to delta-v = c ln(m0/mf).

Loss budget
-----------
Projected on v_hat = v_rel / |v_rel| (v_rel = V - omega x r, Earth-relative),
the speed equation in the rotating frame is (Coriolis does no work)

    d|v_rel|/dt = F_vac/m - (F_vac - F)/m - F/m (1 - u_T . v_hat)
                  - D/m (v_hat_air . v_hat) + g . v_hat + a_cf . v_hat,

with a_cf = omega^2 (x, y, 0). The state carries the integrals of each term:
gravity loss int -g . v_hat dt, drag loss int D/m (v_hat_air . v_hat) dt,
steering loss int F/m (1 - u_T . v_hat) dt, back-pressure loss int p_a A_e/m dt,
the ideal delta-v int F_vac/m dt and the centrifugal term. While the vehicle is
held on the pad or rail the thrust acceleration is booked as gravity loss.

`derivatives` is compiled with numba; its ``py_func`` is the same function as
plain Python, which the tests drive with ``scipy.integrate.solve_ivp`` as an
independent integrator (the oracle).
"""

from __future__ import annotations

import math

from sizing.physics._jit import njit
from sizing.physics.atmosphere import standard_atmosphere
from sizing.physics.flight.layout import (
    D_ACC, D_ALT, D_DRAG, D_MACH, D_Q, D_THRUST, D_VREL, ENV_ATM_MODEL, ENV_ATM_TOP, ENV_DRAG, ENV_G_FLAT,
    ENV_GRAVITY, ENV_MU, ENV_OMEGA, ENV_RADIUS, ENV_RAIL, ENV_RHO0, ENV_ROUND, ENV_SCALE_HEIGHT, ENV_SITE_ALT,
    ENV_VACUUM_BELOW_GROUND, ENV_WIND_EXPONENT, ENV_WIND_MODEL, ENV_WIND_REF_HEIGHT, ENV_WIND_REF_SPEED,
    ENV_WIND_TO_EAST, ENV_WIND_TO_NORTH, PH_BURNING, PH_DRAG_LEN, PH_DRAG_OFF, PH_EXIT_AREA, PH_FA, PH_FB, PH_MA,
    PH_MB, PH_MODE, PH_PITCH, PH_REF_AREA, PH_T0, TB_WIND_N, TB_WIND_OFF,
)
from sizing.physics.flight.steering import table_pair_value, thrust_direction

__all__ = ["air", "altitude_up", "drag_coefficient", "wind_velocity", "velocities", "mach_number", "derivatives"]

#: Speed of sound reported by the exponential atmosphere [m/s] (USSA 1976 sea level; only
#: Mach numbers read it, and the exponential model serves constant-C_D benchmarks).
_EXP_SOUND_SPEED_M_S = 340.294


@njit(inline=True)
def altitude_up(y, par):
    """(altitude [m], unit local vertical) of a state."""
    if par[ENV_ROUND] > 0.0:
        r = math.sqrt(y[0] * y[0] + y[1] * y[1] + y[2] * y[2])
        ir = 1.0 / r
        return r - par[ENV_RADIUS], (y[0] * ir, y[1] * ir, y[2] * ir)
    return y[2], (0.0, 0.0, 1.0)


@njit(inline=True)
def air(alt, par):
    """(p [Pa], rho [kg/m^3], a [m/s]) of the flight's atmosphere at an altitude; vacuum outside it."""
    if alt >= par[ENV_ATM_TOP] or (alt <= 0.0 and par[ENV_VACUUM_BELOW_GROUND] > 0.0):
        return 0.0, 0.0, 1.0
    if par[ENV_ATM_MODEL] == 1.0:
        return 0.0, par[ENV_RHO0] * math.exp(-alt / par[ENV_SCALE_HEIGHT]), _EXP_SOUND_SPEED_M_S
    _, p, rho, a = standard_atmosphere(alt)
    return p, rho, a


@njit(inline=True)
def drag_coefficient(mach, par, off, n):
    """C_D at a Mach number from the stage's table in `par` (n Mach numbers at off, then n C_D; linear)."""
    return table_pair_value(par, off, n, mach)


@njit(inline=True)
def wind_velocity(alt, up, par):
    """Inertial components of the horizontal wind at an altitude (power law or table vs height above site).

    Power law w = w_ref (z / z_ref)^alpha (the wind-profile power law of
    atmospheric boundary layers; alpha = 1/7 for open terrain is common
    practice, no source); alpha = 0 is a constant wind. The direction is fixed
    in the local east/north axes.
    """
    model = par[ENV_WIND_MODEL]
    if model == 0.0:
        return 0.0, 0.0, 0.0
    z = alt - par[ENV_SITE_ALT]
    if z <= 0.0:
        return 0.0, 0.0, 0.0
    if model == 1.0:
        speed = par[ENV_WIND_REF_SPEED]
        if par[ENV_WIND_EXPONENT] != 0.0:
            speed *= (z / par[ENV_WIND_REF_HEIGHT]) ** par[ENV_WIND_EXPONENT]
    else:
        speed = table_pair_value(par, int(par[TB_WIND_OFF]), int(par[TB_WIND_N]), z)
    we, wn = par[ENV_WIND_TO_EAST] * speed, par[ENV_WIND_TO_NORTH] * speed
    if par[ENV_ROUND] > 0.0:
        ux, uy, uz = up
        rxy = math.sqrt(ux * ux + uy * uy)
        ex, ey = -uy / rxy, ux / rxy
        nx, ny, nz = -uz * ey, uz * ex, ux * ey - uy * ex
        return we * ex + wn * nx, we * ey + wn * ny, wn * nz
    return we, wn, 0.0


@njit(inline=True)
def velocities(y, alt, up, par):
    """(Earth-relative velocity v_rel = V - omega x r, air-relative velocity v_rel - w(h)), inertial axes."""
    w = par[ENV_OMEGA]
    vrx, vry, vrz = y[3] + w * y[1], y[4] - w * y[0], y[5]
    wx, wy, wz = wind_velocity(alt, up, par)
    return (vrx, vry, vrz), (vrx - wx, vry - wy, vrz - wz)


@njit(inline=True)
def mach_number(y, par):
    """Mach number of a state (air-relative speed over the local speed of sound)."""
    alt, up = altitude_up(y, par)
    _, va = velocities(y, alt, up, par)
    return math.sqrt(va[0] * va[0] + va[1] * va[1] + va[2] * va[2]) / air(alt, par)[2]


@njit
def derivatives(t, y, dy, diag, par, ph, on_rail):
    """Fill dy (13 components; reads y[0:7]) and diag (7) at time t in phase row `ph` (`par`: see `layout`)."""
    x, yy, z, vx, vy, vz, m = y[0], y[1], y[2], y[3], y[4], y[5], y[6]
    alt, up = altitude_up(y, par)
    ux, uy, uz = up
    gx = gy = gz = 0.0
    if par[ENV_GRAVITY] > 0.0:
        if par[ENV_ROUND] > 0.0:
            r2 = x * x + yy * yy + z * z
            gk = -par[ENV_MU] / (r2 * math.sqrt(r2))
            gx, gy, gz = gk * x, gk * yy, gk * z
        else:
            gz = -par[ENV_G_FLAT]
    (vrx, vry, vrz), (vax, vay, vaz) = velocities(y, alt, up, par)
    vrel = math.sqrt(vrx * vrx + vry * vry + vrz * vrz)
    vair2 = vax * vax + vay * vay + vaz * vaz
    vair = math.sqrt(vair2)
    p_a, rho, a_s = air(alt, par)
    fv = f = mdot = 0.0
    if ph[PH_BURNING] > 0.0:
        dt = t - ph[PH_T0]
        fv = ph[PH_FA] + ph[PH_FB] * dt
        f = max(0.0, fv - p_a * ph[PH_EXIT_AREA])
        mdot = ph[PH_MA] + ph[PH_MB] * dt
    mach = vair / a_s
    dmag = 0.0
    if par[ENV_DRAG] > 0.0 and rho > 0.0 and vair > 0.0:
        cd = drag_coefficient(mach, par, int(ph[PH_DRAG_OFF]), int(ph[PH_DRAG_LEN]))
        dmag = 0.5 * rho * vair2 * cd * ph[PH_REF_AREA]
    has_vel = vair > 1e-6
    if has_vel:
        ahx, ahy, ahz = vax / vair, vay / vair, vaz / vair
    else:
        ahx = ahy = ahz = 0.0
    tx, ty, tz = thrust_direction(int(ph[PH_MODE]), t, y, up, (ahx, ahy, ahz), has_vel, on_rail, par,
                                  ph[PH_PITCH])
    if vrel > 1e-6:
        vhx, vhy, vhz = vrx / vrel, vry / vrel, vrz / vrel
    else:
        vhx, vhy, vhz = tx, ty, tz
    if not has_vel:
        ahx, ahy, ahz = vhx, vhy, vhz
    im = 1.0 / m
    fm = f * im
    dm = dmag * im
    ax = fm * tx - dm * ahx + gx
    ay = fm * ty - dm * ahy + gy
    az = fm * tz - dm * ahz + gz
    d_grav = -(gx * vhx + gy * vhy + gz * vhz)
    d_steer = fm * (1.0 - (tx * vhx + ty * vhy + tz * vhz))
    d_drag = dm * (ahx * vhx + ahy * vhy + ahz * vhz)
    if on_rail:
        rux, ruy, ruz = par[ENV_RAIL], par[ENV_RAIL + 1], par[ENV_RAIL + 2]
        vhx, vhy, vhz = rux, ruy, ruz
        a_al = ax * rux + ay * ruy + az * ruz
        d_steer = 0.0
        d_drag = dm * (ahx * rux + ahy * ruy + ahz * ruz)
        d_grav = -(gx * rux + gy * ruy + gz * ruz)
        if a_al < 0.0 and (vx * rux + vy * ruy + vz * ruz) <= 0.0:
            a_al = 0.0  # held on the pad: thrust below weight counts as gravity loss
            d_grav = fm - d_drag
        ax, ay, az = a_al * rux, a_al * ruy, a_al * ruz
    dy[0], dy[1], dy[2] = vx, vy, vz
    dy[3], dy[4], dy[5] = ax, ay, az
    dy[6] = -mdot
    dy[7] = d_grav
    dy[8] = d_drag
    dy[9] = d_steer
    dy[10] = (fv - f) * im
    dy[11] = fv * im
    w = par[ENV_OMEGA]
    dy[12] = w * w * (x * vhx + yy * vhy)
    sx, sy, sz = fm * tx - dm * ahx, fm * ty - dm * ahy, fm * tz - dm * ahz
    diag[D_ALT] = alt
    diag[D_VREL] = vrel
    diag[D_MACH] = mach
    diag[D_Q] = 0.5 * rho * vair2
    diag[D_ACC] = math.sqrt(sx * sx + sy * sy + sz * sz)
    diag[D_THRUST] = f
    diag[D_DRAG] = dmag
