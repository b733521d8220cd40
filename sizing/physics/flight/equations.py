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

Body axis and weathercocking (steering mode ``MODE_BODY``)
---------------------------------------------------------
A sounding or hobby rocket is not steered: its nose turns into the
air-relative velocity under the aerodynamic moment of its fins. In
``MODE_BODY`` the state carries the unit body axis b (nose direction) and the
angular velocity omega of a rigid, roll-free axisymmetric body; the thrust acts
along b. Each Barrowman component i (normal-force slope C_N_alpha,i at x_i from
the nose tip; `sizing.physics.airframe`) sees the local air velocity
v_air - l_i (omega x b), l_i = x_i - x_cg the distance aft of the centre of
gravity, and gives a normal force along minus the local cross-flow,

    N_i = -1/2 rho |v_air| S C_N_alpha,i (v_perp - l_i omega x b),
    v_perp = v_air - (v_air . b) b,

(quasi-steady linear aerodynamics, |N_i| = q S C_N_alpha,i sin(alpha_i)).
Summed, with the sums kept per configuration (`layout`, AB_*):

    N = -1/2 rho |v_air| S (C_N_alpha v_perp - C1 omega x b),
    M = 1/2 rho |v_air| S (C1 b x v_air - C2 omega_perp) - mdot l_e^2 omega_perp,
    I domega/dt = M,   db/dt = omega x b,

with C1 = sum C_N_alpha,i l_i = C_N_alpha (x_cp - x_cg) (restoring: the static
margin times the normal-force slope), C2 = sum C_N_alpha,i l_i^2 (aerodynamic
pitch damping), l_e = x_nozzle - x_cg and mdot l_e^2 the jet damping of the
exhaust (the corrective and damping moment coefficients C1 = q S C_N_alpha
(x_cp - x_cg) and C2 = C2A + C2R of G. K. Mandell, G. J. Caporaso, W. P.
Bengen, Topics in Advanced Model Rocketry, MIT Press, 1973, ch. 4-5; from
memory). The pitch inertia I and x_cg follow the mass (the burning
propellant's centroid is fixed). The small-angle, constant-speed form is the
damped oscillator I alpha'' + (1/2 rho V S C2 + mdot l_e^2) alpha' + q S C1 alpha = 0.
N enters the translation (its part along the velocity is booked as drag loss);
the zero-lift drag stays along -v_air (``with_drag=False`` removes that drag
only; the normal force and the moments stay). On the rail the axis is the rail's. The
zero-lift flight (``MODE_PROGRADE``, thrust along v_air) is the limit of a
body that aligns at once.

`derivatives` is compiled with numba; its ``py_func`` is the same function as
plain Python, which the tests drive with ``scipy.integrate.solve_ivp`` as an
independent integrator (the oracle).
"""

from __future__ import annotations

import math

from sizing.physics._jit import njit
from sizing.physics.atmosphere import standard_atmosphere
from sizing.physics.flight.layout import (
    AB_AREA, AB_J_DRY, AB_J_PROP, AB_M1_DRY, AB_M_DRY, AB_N_MACH, AB_NOZZLE_X, AB_SIZE, AB_X_PROP, D_ACC, D_ALPHA,
    D_ALT, D_DRAG, D_MACH, D_Q, D_THRUST, D_VREL, ENV_ATM_MODEL, ENV_ATM_TOP, ENV_DRAG, ENV_G_FLAT, ENV_GRAVITY,
    ENV_MU, ENV_OMEGA, ENV_RADIUS, ENV_RAIL, ENV_RHO0, ENV_ROUND, ENV_SCALE_HEIGHT, ENV_SITE_ALT,
    ENV_VACUUM_BELOW_GROUND, ENV_WIND_EXPONENT, ENV_WIND_MODEL, ENV_WIND_REF_HEIGHT, ENV_WIND_REF_SPEED,
    ENV_WIND_TO_EAST, ENV_WIND_TO_NORTH, ENV_WIND_TOP, MODE_BODY, PH_AERO_OFF, PH_BURNING, PH_DRAG_LEN,
    PH_DRAG_OFF, PH_EXIT_AREA, PH_FA, PH_FB, PH_MA, PH_MB, PH_MODE, PH_PITCH, PH_REF_AREA, PH_T0, TB_WIND_N,
    TB_WIND_OFF, Y_AXIS, Y_OMEGA,
)
from sizing.physics.flight.steering import table_pair_value, table_slice_value, thrust_direction

__all__ = ["air", "altitude_up", "drag_coefficient", "wind_velocity", "velocities", "mach_number", "body_aero",
           "derivatives"]

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
    practice, no source), held above ENV_WIND_TOP; alpha = 0 is a constant
    wind. The direction is fixed in the local east/north axes, except for the
    table of east and north components (model 3), interpolated linearly in height.
    """
    model = par[ENV_WIND_MODEL]
    if model == 0.0:
        return 0.0, 0.0, 0.0
    z = alt - par[ENV_SITE_ALT]
    if z <= 0.0:
        return 0.0, 0.0, 0.0
    if model == 3.0:
        off, n = int(par[TB_WIND_OFF]), int(par[TB_WIND_N])
        we = table_slice_value(par, par, off, n, z, n)
        wn = table_slice_value(par, par, off, n, z, 2 * n)
    else:
        if model == 1.0:
            speed = par[ENV_WIND_REF_SPEED]
            if par[ENV_WIND_EXPONENT] != 0.0:
                speed *= (min(z, par[ENV_WIND_TOP]) / par[ENV_WIND_REF_HEIGHT]) ** par[ENV_WIND_EXPONENT]
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


@njit(inline=True)
def body_aero(y, va, rho, mach, mdot, par, ph):
    """Normal force [N], angular acceleration [rad/s^2] and angle of attack [rad] of a body-axis flight.

    `va` is the air-relative velocity (inertial axes). See the module notes
    (``MODE_BODY``); the configuration's AB_* block is at ``ph[PH_AERO_OFF]``.
    """
    blk = int(ph[PH_AERO_OFF])
    bx, by, bz = y[Y_AXIS], y[Y_AXIS + 1], y[Y_AXIS + 2]
    ib = 1.0 / math.sqrt(bx * bx + by * by + bz * bz)
    bx, by, bz = bx * ib, by * ib, bz * ib
    wx, wy, wz = y[Y_OMEGA], y[Y_OMEGA + 1], y[Y_OMEGA + 2]
    vax, vay, vaz = va
    # mass properties: the burning stage's propellant at a fixed centroid
    mp = max(0.0, y[6] - par[blk + AB_M_DRY])
    mc = par[blk + AB_M_DRY] + mp
    m1 = par[blk + AB_M1_DRY] + mp * par[blk + AB_X_PROP]
    xcg = m1 / mc
    inertia = par[blk + AB_J_DRY] + mp * par[blk + AB_J_PROP] - m1 * xcg
    # Barrowman sums on the Mach table
    n = int(par[blk + AB_N_MACH])
    t0 = blk + AB_SIZE
    s0 = table_slice_value(par, par, t0, n, mach, n)
    s1 = table_slice_value(par, par, t0, n, mach, 2 * n)
    s2 = table_slice_value(par, par, t0, n, mach, 3 * n)
    c1 = s1 - xcg * s0
    c2 = s2 - 2.0 * xcg * s1 + xcg * xcg * s0
    vair = math.sqrt(vax * vax + vay * vay + vaz * vaz)
    k = 0.5 * rho * vair * par[blk + AB_AREA]
    vb = vax * bx + vay * by + vaz * bz
    px, py, pz = vax - vb * bx, vay - vb * by, vaz - vb * bz
    ox, oy, oz = wy * bz - wz * by, wz * bx - wx * bz, wx * by - wy * bx  # omega x b
    nx = -k * (s0 * px - c1 * ox)
    ny = -k * (s0 * py - c1 * oy)
    nz = -k * (s0 * pz - c1 * oz)
    wb = wx * bx + wy * by + wz * bz
    qx, qy, qz = wx - wb * bx, wy - wb * by, wz - wb * bz  # omega normal to the axis
    le = par[blk + AB_NOZZLE_X] - xcg
    damp = k * c2 + mdot * le * le
    cx, cy, cz = by * vaz - bz * vay, bz * vax - bx * vaz, bx * vay - by * vax  # b x v_air
    ii = 1.0 / inertia
    ax = (k * c1 * cx - damp * qx) * ii
    ay = (k * c1 * cy - damp * qy) * ii
    az = (k * c1 * cz - damp * qz) * ii
    alpha = math.atan2(math.sqrt(cx * cx + cy * cy + cz * cz), vb) if vair > 0.0 else 0.0
    return (nx, ny, nz), (ax, ay, az), alpha


@njit
def derivatives(t, y, dy, diag, par, ph, on_rail):
    """Fill dy (19 components; reads y[0:7], and the attitude y[13:19] in MODE_BODY) and diag (8) at time t
    in phase row `ph` (`par`: see `layout`)."""
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
    nfx = nfy = nfz = alpha = 0.0
    body = int(ph[PH_MODE]) == MODE_BODY and not on_rail
    if body:
        (nfx, nfy, nfz), (wdx, wdy, wdz), alpha = body_aero(y, (vax, vay, vaz), rho, mach, mdot, par, ph)
        nfx, nfy, nfz = nfx * im, nfy * im, nfz * im
        wx, wy, wz = y[Y_OMEGA], y[Y_OMEGA + 1], y[Y_OMEGA + 2]
        bx, by, bz = y[Y_AXIS], y[Y_AXIS + 1], y[Y_AXIS + 2]
        dy[Y_AXIS], dy[Y_AXIS + 1], dy[Y_AXIS + 2] = wy * bz - wz * by, wz * bx - wx * bz, wx * by - wy * bx
        dy[Y_OMEGA], dy[Y_OMEGA + 1], dy[Y_OMEGA + 2] = wdx, wdy, wdz
    else:
        for j in range(Y_AXIS, Y_OMEGA + 3):
            dy[j] = 0.0
    ax = fm * tx - dm * ahx + nfx + gx
    ay = fm * ty - dm * ahy + nfy + gy
    az = fm * tz - dm * ahz + nfz + gz
    d_grav = -(gx * vhx + gy * vhy + gz * vhz)
    d_steer = fm * (1.0 - (tx * vhx + ty * vhy + tz * vhz))
    d_drag = dm * (ahx * vhx + ahy * vhy + ahz * vhz) - (nfx * vhx + nfy * vhy + nfz * vhz)
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
    sx, sy, sz = fm * tx - dm * ahx + nfx, fm * ty - dm * ahy + nfy, fm * tz - dm * ahz + nfz
    diag[D_ALT] = alt
    diag[D_VREL] = vrel
    diag[D_MACH] = mach
    diag[D_Q] = 0.5 * rho * vair2
    diag[D_ACC] = math.sqrt(sx * sx + sy * sy + sz * sz)
    diag[D_THRUST] = f
    diag[D_DRAG] = dmag
    diag[D_ALPHA] = alpha
