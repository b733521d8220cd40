"""Events and kinks located on a step's continuous extension (compiled).

Events that depend on the state (rail exit, apogee, impact) are located by
regula falsi with the Illinois modification (M. Dowell, P. Jarratt, BIT 11,
1971, 168-174) on the Dormand-Prince dense output; the step to the event is
then integrated and polished by secant steps on the integrated state.

Kinks of the right-hand side that depend on the state (the atmosphere's layer
boundaries, the drag table's Mach knots) are treated alike: a step that
straddles one is cut at the crossing, unless drag and pressure thrust together
move the speed by less than the tolerance over the step. The crossing is also
predicted from the last three samples (quadratic extrapolation), so that a
step can end just past it instead of being tried and cut.

One locator (`illinois`) serves every event and kink; `event_value` is the
switch over event functions. Knot tables live in the parameter array ``par``
(`layout`) and are read by offset.
"""

from __future__ import annotations

import math

import numpy as np

from sizing.physics._jit import njit
from sizing.physics.flight.equations import air, altitude_up, mach_number
from sizing.physics.flight.integrator import dense
from sizing.physics.flight.layout import (
    ENV_ATM_TOP, ENV_DRAG, ENV_R0, ENV_RAIL, ENV_ROUND, N_MOTION, TB_KINK_N, TB_KINK_OFF,
)

__all__ = ["EV_NONE", "EV_RAIL", "EV_APOGEE", "EV_IMPACT", "EV_ALTITUDE", "EV_MACH", "radial_speed", "event_value",
           "illinois", "kink_fraction", "predict_kink"]

EV_NONE, EV_RAIL, EV_APOGEE, EV_IMPACT, EV_ALTITUDE, EV_MACH = range(6)


@njit
def radial_speed(y, par):
    """Rate of change of the distance from the Earth's centre (vertical speed on the flat Earth) [m/s]."""
    if par[ENV_ROUND] > 0.0:
        r = math.sqrt(y[0] * y[0] + y[1] * y[1] + y[2] * y[2])
        return (y[0] * y[3] + y[1] * y[4] + y[2] * y[5]) / r
    return y[5]


@njit
def event_value(kind, y, par):
    """Value of an event function at a state; the event is where it crosses its target."""
    if kind == EV_RAIL:
        return ((y[0] - par[ENV_R0]) * par[ENV_RAIL] + (y[1] - par[ENV_R0 + 1]) * par[ENV_RAIL + 1]
                + (y[2] - par[ENV_R0 + 2]) * par[ENV_RAIL + 2])
    if kind == EV_APOGEE:
        return radial_speed(y, par)
    if kind == EV_MACH:
        return mach_number(y, par)
    return altitude_up(y, par)[0]  # EV_IMPACT, EV_ALTITUDE


@njit
def illinois(kind, target, y0, h, K, fa, fb, par, xtol, ftol):
    """Fraction x in [0, 1] of the step where the event function crosses `target` (dense output).

    fa, fb: function minus target at the step's start and end (of opposite signs).
    """
    a, b = 0.0, 1.0
    side = 0
    c = 1.0
    buf = np.empty(N_MOTION)
    for _ in range(60):
        if fb == fa:
            break
        c = (a * fb - b * fa) / (fb - fa)
        dense(y0, h, K, c, buf, N_MOTION)
        fc = event_value(kind, buf, par) - target
        if abs(fc) < ftol or b - a < xtol:
            break
        if (fc > 0.0) == (fb > 0.0):
            b, fb = c, fc
            if side == -1:
                fa *= 0.5
            side = -1
        else:
            a, fa = c, fc
            if side == 1:
                fb *= 0.5
            side = 1
    return c


@njit
def _count_below(par, off, n, v):
    """Number of knots in par[off:off+n] (increasing) that are <= v (numpy.searchsorted, side 'right')."""
    lo, hi = 0, n
    while lo < hi:
        mid = (lo + hi) // 2
        if par[off + mid] <= v:
            lo = mid + 1
        else:
            hi = mid
    return lo


@njit
def _first_crossing(kind, par, off, n, v0, v1, y0, h, K, best):
    """Update `best` with the fraction of the step where a knot of par[off:off+n] between v0 and v1 is crossed."""
    i0 = _count_below(par, off, n, v0)
    i1 = _count_below(par, off, n, v1)
    if i0 == i1:
        return best
    if kind == EV_MACH and min(i0, i1) == 0:
        return best
    kb = par[off + i0] if i1 > i0 else par[off + i0 - 1]
    fa, fb = v0 - kb, v1 - kb
    if (fa > 0.0) == (fb > 0.0):
        return best
    # a crossing in the step's last percent stays in the step: one test instead of the search
    buf = np.empty(N_MOTION)
    dense(y0, h, K, 0.99, buf, N_MOTION)
    if (event_value(kind, buf, par) - kb > 0.0) == (fa > 0.0):
        return best
    c = illinois(kind, kb, y0, h, K, fa, fb, par, 1e-6, 1e-9 * (1.0 + abs(kb)))
    return c if c < best else best


@njit
def kink_fraction(diag0, diag1, y0, h, K, par, mach_off, mach_n, burning, exit_area, rtol, vel_scale):
    """Fraction in (0, 1) of the step where it first crosses an atmosphere or drag-table kink, or 2.0.

    No cut when drag and pressure thrust cannot spoil the step: their speed
    change over the whole step is below the tolerance.
    """
    alt0, alt1 = diag0[0], diag1[0]
    p_lo = 0.0
    if burning:
        p_lo = air(min(alt0, alt1), par)[0]
    m_lo = min(y0[6], y0[6] + h * K[0, 6])
    d_hi = max(diag0[6], diag1[6])
    if h * (d_hi + p_lo * exit_area) / m_lo < rtol * (vel_scale + diag1[1]):
        return 2.0
    best = _first_crossing(EV_ALTITUDE, par, int(par[TB_KINK_OFF]), int(par[TB_KINK_N]), alt0, alt1, y0, h, K,
                           2.0)
    top = par[ENV_ATM_TOP]
    if par[ENV_DRAG] > 0.0 and diag0[1] > 0.0 and mach_n > 1 and alt0 < top and alt1 < top:
        best = _first_crossing(EV_MACH, par, mach_off, mach_n, diag0[2], diag1[2], y0, h, K, best)
    return best


@njit
def _predict_one(par, off, n, ta, tb, tc, fa, fb, fc, h):
    """Time after tc where the quadratic through three samples crosses the next knot, or inf."""
    d1 = (fc - fb) / (tc - tb)
    d2 = (d1 - (fb - fa) / (tb - ta)) / (tc - ta)
    fh = fc + h * (d1 + d2 * (h + tc - tb))
    i0 = _count_below(par, off, n, fc)
    i1 = _count_below(par, off, n, fh)
    if i0 == i1:
        return math.inf
    kb = par[off + i0] if i1 > i0 else par[off + i0 - 1]
    lo, hi, flo, fhi = 0.0, h, fc - kb, fh - kb
    if (flo > 0.0) == (fhi > 0.0):
        return math.inf
    mid = hi
    for _ in range(8):
        mid = lo - flo * (hi - lo) / (fhi - flo)
        fm = fc + mid * (d1 + d2 * (mid + tc - tb)) - kb
        if (fm > 0.0) == (flo > 0.0):
            lo, flo = mid, fm
        else:
            hi, fhi = mid, fm
        if hi - lo < 1e-4 * h:
            break
    return mid


@njit
def predict_kink(track, n_track, t, h, par, mach_off, mach_n, use_mach):
    """Step length that ends just past the next kink predicted within h, or 0.0 for none.

    `track` rows are the last three samples (t, altitude, Mach), oldest first.
    """
    if n_track < 3:
        return 0.0
    ta, tb, tc = track[0, 0], track[1, 0], track[2, 0]
    if not (ta < tb < tc) or tc != t:
        return 0.0
    best = _predict_one(par, int(par[TB_KINK_OFF]), int(par[TB_KINK_N]), ta, tb, tc, track[0, 1], track[1, 1],
                        track[2, 1], h)
    if use_mach and mach_n > 1:
        best = min(best, _predict_one(par, mach_off, mach_n, ta, tb, tc, track[0, 2], track[1, 2], track[2, 2], h))
    if not best < math.inf or best < 0.05 * h:
        return 0.0
    return best * 1.003
