"""Optimal staging of a restricted multistage rocket (Lagrange multiplier method).

Notation (Curtis, Sec. 11.6): stage i has exhaust velocity c_i and structural
coefficient eps_i = m_s/(m_s + m_p); its mass ratio is n_i = m0_i / mf_i.
Minimising gross mass for a given ideal delta-v gives, with multiplier eta,

    n_i = (c_i eta - 1) / (c_i eps_i eta),     sum_i c_i ln n_i = delta_v.

Here we write u = 1/eta [m/s], so n_i(u) = (1 - u/c_i) / eps_i. A stage for
which this is below 1 is too weak to help: the optimum gives it n_i = 1 (zero
mass) -- the Karush-Kuhn-Tucker condition of the bound n_i >= 1. The delta-v
is then monotone in u on (0, max_i c_i(1 - eps_i)], and one scalar root
gives the whole solution. The dual problems (maximum payload for a given
gross mass, maximum delta-v for given gross and payload masses) share the
same stationarity condition and differ only in which equation fixes u.

References
----------
.. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014,
   Sec. 11.6 "Optimal staging", eqs. 11.58-11.63.
.. [2] K. Niemeyer, Rocket Propulsion (open textbook), "Rocket staging".
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = [
    "StagingSolution",
    "max_ideal_delta_v",
    "optimal_mass_ratios",
    "optimal_mass_ratios_for_growth",
    "optimal_mass_ratios_batch",
    "stage_log_growth",
    "identical_stages_payload_fraction",
    "identical_stages_delta_v",
    "infinite_stages_delta_v",
]

_REL_TOL = 1e-14
_MAX_ITER = 200


@dataclass(frozen=True, slots=True)
class StagingSolution:
    """Mass ratios at the optimum and the multiplier that produced them.

    Attributes
    ----------
    mass_ratios : tuple of float
        n_i, bottom stage first [-].
    u_m_s : float
        1/eta, the inverse Lagrange multiplier [m/s].
    delta_v_m_s : float
        sum c_i ln n_i [m/s].
    log_growth : float
        ln(gross mass / payload mass) [-].
    n_iterations : int
        Root-finder iterations.
    """

    mass_ratios: tuple[float, ...]
    u_m_s: float
    delta_v_m_s: float
    log_growth: float
    n_iterations: int

    @property
    def eta_s_m(self) -> float:
        """Lagrange multiplier eta [s/m] in Curtis's notation."""
        return 1.0 / self.u_m_s


def max_ideal_delta_v(c_m_s, eps) -> float:
    """Supremum of ideal delta-v of a stack, reached only at infinite gross mass.

    Each stage's mass ratio is bounded by 1/eps_i (a stage of pure structure
    and propellant with nothing above it), so delta-v < sum c_i ln(1/eps_i).

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, Sec. 11.6.
    """
    return float(sum(c * math.log(1.0 / e) for c, e in zip(c_m_s, eps)))


def stage_log_growth(n: float, eps: float) -> float:
    """ln(m0_i / m0_{i+1}) of one stage with mass ratio n: ln[n(1-eps)/(1-n eps)]."""
    return math.log(n * (1.0 - eps) / (1.0 - n * eps))


def _ratios(u: float, c, eps) -> list[float]:
    return [max(1.0, (1.0 - u / ci) / ei) for ci, ei in zip(c, eps)]


def _solve_u(fun, u_hi: float) -> tuple[float, int]:
    """Root of a decreasing function on (0, u_hi) by Newton's method kept in a bracket."""
    lo, hi = 0.0, u_hi
    u = 0.5 * u_hi
    tol = _REL_TOL * u_hi
    for it in range(1, _MAX_ITER + 1):
        g, dg = fun(u)
        if g == 0.0:
            return u, it
        if g > 0.0:
            lo = u
        else:
            hi = u
        step = g / dg if dg != 0.0 else math.inf
        if abs(step) <= tol:
            return u - step, it
        u_new = u - step
        if not (lo < u_new < hi):
            u_new = 0.5 * (lo + hi)
        if hi - lo <= tol:
            return u_new, it
        u = u_new
    return u, _MAX_ITER


def _initial_u(c, log_inv_e, dv: float, u_hi: float) -> float:
    """Start for the root of sum c_i ln((1 - u/c_i)/eps_i) = dv.

    Exact when every exhaust velocity is the same: with c_h the harmonic mean
    of the c_i and D = sum c_i ln(1/eps_i) - dv, u0 = c_h (1 - exp(-D/(N c_h))).
    Typically within 1 % of the root for mixed stages.
    """
    n = len(c)
    d = sum(ci * li for ci, li in zip(c, log_inv_e)) - dv
    ch = n / sum(1.0 / ci for ci in c)
    u0 = ch * -math.expm1(-d / (n * ch))
    return min(max(u0, 1e-12 * u_hi), u_hi * (1.0 - 1e-12))


def optimal_mass_ratios(c_m_s, eps, delta_v_m_s: float) -> StagingSolution:
    """Mass ratios that minimise gross mass for an ideal delta-v (Lagrange method).

    Parameters
    ----------
    c_m_s : sequence of float
        Effective exhaust velocity of each stage, bottom first [m/s], > 0.
    eps : sequence of float
        Structural coefficient of each stage [-], in (0, 1).
    delta_v_m_s : float
        Ideal delta-v target [m/s], in [0, max_ideal_delta_v).

    Returns
    -------
    StagingSolution

    Raises
    ------
    ValueError
        If the target is at or beyond `max_ideal_delta_v` or negative.

    Notes
    -----
    Halley's method on u = 1/eta from the start of `_initial_u`, kept inside a
    shrinking bracket (bisection when a step leaves it); typically 2-3 steps.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014,
       Sec. 11.6, eqs. 11.58-11.63.

    Examples
    --------
    Curtis Example 11.6 (g0 = 9.81 m/s^2): eta = 0.4668 s/km.

    >>> sol = optimal_mass_ratios([3924.0, 3433.5, 2943.0], [0.1, 0.15, 0.2], 10000.0)
    >>> round(sol.eta_s_m * 1000, 4)
    0.4668
    """
    c = [float(x) for x in c_m_s]
    e = [float(x) for x in eps]
    dv = float(delta_v_m_s)
    log = math.log
    le = [-log(ei) for ei in e]
    dv_max = sum(ci * li for ci, li in zip(c, le))
    if not dv >= 0:
        raise ValueError(f"delta_v must be >= 0. Got {dv}.")
    if dv >= dv_max:
        raise ValueError(f"delta_v {dv:.6g} m/s is at or beyond the supremum {dv_max:.6g} m/s.")
    u_hi = max(ci * (1.0 - ei) for ci, ei in zip(c, e))
    if dv == 0.0:
        return StagingSolution(tuple(1.0 for _ in c), u_hi, 0.0, 0.0, 0)
    stages = list(zip(c, e, le))
    u = _initial_u(c, le, dv, u_hi)
    lo, hi = 0.0, u_hi
    tol = _REL_TOL * u_hi
    it = 0
    while it < _MAX_ITER:
        it += 1
        g = -dv
        dg = 0.0
        d2g = 0.0
        for ci, ei, li in stages:
            r = 1.0 - u / ci
            if r > ei:
                g += ci * (log(r) + li)
                ir = 1.0 / r
                dg -= ir
                d2g -= ir * ir / ci
        if g > 0.0:
            lo = u
        elif g < 0.0:
            hi = u
        else:
            break
        den = 2.0 * dg * dg - g * d2g
        step = 2.0 * g * dg / den if den != 0.0 else math.inf
        if abs(step) <= tol:
            u -= step
            break
        u_new = u - step
        if not (lo < u_new < hi):
            u_new = 0.5 * (lo + hi)
        u = u_new
        if hi - lo <= tol:
            break
    n = [max(1.0, (1.0 - u / ci) / ei) for ci, ei in zip(c, e)]
    dv_got = 0.0
    growth = 0.0
    for ci, ni, ei in zip(c, n, e):
        dv_got += ci * log(ni)
        growth += log(ni * (1.0 - ei) / (1.0 - ni * ei))
    return StagingSolution(tuple(n), u, dv_got, growth, it)


def optimal_mass_ratios_for_growth(c_m_s, eps, log_growth: float) -> StagingSolution:
    """Mass ratios that maximise ideal delta-v for a given ln(gross/payload).

    Same stationarity condition as `optimal_mass_ratios`; u is fixed by
    sum_i ln[n_i(1 - eps_i)/(1 - n_i eps_i)] = ln(m0/m_PL) instead.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, Sec. 11.6
       (the same Lagrangian, with the roles of objective and constraint exchanged).
    """
    c = [float(x) for x in c_m_s]
    e = [float(x) for x in eps]
    L = float(log_growth)
    if L < 0:
        raise ValueError(f"gross mass must be >= payload mass (log growth {L} < 0).")
    u_hi = max(ci * (1.0 - ei) for ci, ei in zip(c, e))
    if L == 0.0:
        return StagingSolution(tuple(1.0 for _ in c), u_hi, 0.0, 0.0, 0)

    def fun(u: float) -> tuple[float, float]:
        g = -L
        dg = 0.0
        for ci, ei in zip(c, e):
            r = 1.0 - u / ci
            if r > ei:
                # ln[n(1-eps)/(1-n eps)] with n = r/eps and 1 - n eps = u/c
                g += math.log(r * (1.0 - ei) * ci / (ei * u))
                dg += -1.0 / (ci - u) - 1.0 / u
        return g, dg

    u, it = _solve_u(fun, u_hi)
    n = _ratios(u, c, e)
    dv_got = sum(ci * math.log(ni) for ci, ni in zip(c, n))
    growth = sum(stage_log_growth(ni, ei) for ni, ei in zip(n, e))
    return StagingSolution(tuple(n), u, dv_got, growth, it)


def optimal_mass_ratios_batch(c_m_s, eps, delta_v_m_s, *, max_iter: int = 100):
    """Vectorised `optimal_mass_ratios` over M problems of N stages each.

    Parameters
    ----------
    c_m_s, eps : array_like, shape (M, N)
        Exhaust velocities [m/s] and structural coefficients [-], bottom stage first.
    delta_v_m_s : array_like, shape (M,)
        Ideal delta-v targets [m/s].

    Returns
    -------
    n : ndarray, shape (M, N)
        Optimal mass ratios; rows whose target is unreachable are NaN.
    u : ndarray, shape (M,)
        Inverse multipliers [m/s]; NaN where unreachable.
    converged : ndarray of bool, shape (M,)

    Notes
    -----
    Newton's method on u kept inside a shrinking bracket (bisection when a
    Newton step leaves it), applied to all rows at once.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, Sec. 11.6.
    """
    c = np.atleast_2d(np.asarray(c_m_s, dtype=float))
    e = np.atleast_2d(np.asarray(eps, dtype=float))
    c, e = np.broadcast_arrays(c, e)
    m, n_st = c.shape
    dv = np.broadcast_to(np.asarray(delta_v_m_s, dtype=float), (m,))
    inv_c = 1.0 / c
    log_inv_e = -np.log(e)
    d = np.einsum("ij,ij->i", c, log_inv_e) - dv  # sup delta-v minus target
    feasible = (d > 0) & (dv >= 0)
    hi = np.max(c * (1.0 - e), axis=1)
    lo = np.zeros(m)
    # start: exact for equal exhaust velocities (see _initial_u)
    ch = n_st / inv_c.sum(axis=1)
    with np.errstate(invalid="ignore", over="ignore"):
        u = np.clip(ch * -np.expm1(-d / (n_st * ch)), 1e-12 * hi, hi * (1.0 - 1e-12))
    u[~feasible] = np.nan
    tol = _REL_TOL * 4 * hi
    done = ~feasible | (dv == 0)
    u[dv == 0] = hi[dv == 0]
    # Phase 1: a few plain Halley steps on every row at once (no bracketing, no
    # fancy indexing); from the start above nearly every row converges here.
    work = feasible & (dv > 0)
    uw = np.where(work, u, 0.5 * hi)
    for _ in range(3):
        g, step = _halley_terms(uw, c, inv_c, log_inv_e, dv)
        un = uw - step
        uw = np.where(np.isfinite(un) & (un > 0) & (un < hi), un, uw)
    g, step = _halley_terms(uw, c, inv_c, log_inv_e, dv)
    ok = work & np.isfinite(step) & (np.abs(step) <= tol)
    u[ok] = (uw - step)[ok]
    done |= ok
    # Phase 2: the few rows left get the safeguarded (bracketed) iteration.
    active_rows = np.flatnonzero(work & ~ok)
    u[active_rows] = uw[active_rows]
    for _ in range(max_iter):
        if active_rows.size == 0:
            break
        a = active_rows
        ui = u[a]
        g, step = _halley_terms(ui, c[a], inv_c[a], log_inv_e[a], dv[a])
        pos = g > 0
        lo_i = np.where(pos, ui, lo[active_rows])
        hi_i = np.where(pos | (g == 0), hi[active_rows], ui)
        fin = (np.abs(step) <= tol[active_rows]) | (g == 0) | (hi_i - lo_i <= tol[active_rows])
        un = ui - step
        bad = ~((un > lo_i) & (un < hi_i))
        un = np.where(bad & ~fin, 0.5 * (lo_i + hi_i), un)
        # a converged row takes its last (tiny) step and stops
        un = np.where(fin & ~np.isfinite(un), ui, un)
        u[active_rows] = un
        lo[active_rows] = lo_i
        hi[active_rows] = hi_i
        done[active_rows[fin]] = True
        active_rows = active_rows[~fin]
    converged = done & feasible
    n = np.maximum(1.0, (1.0 - u[:, None] * inv_c) / e)
    n[~feasible] = np.nan
    return n, u, converged


def _halley_terms(u, c, inv_c, log_inv_e, dv):
    """g(u) = sum_active c_i ln((1 - u/c_i)/eps_i) - dv and the Halley step g-correction."""
    r = 1.0 - u[:, None] * inv_c
    with np.errstate(invalid="ignore", divide="ignore"):
        lr = np.log(r) + log_inv_e
    act = lr > 0.0
    g = np.einsum("ij,ij->i", c, np.where(act, lr, 0.0)) - dv
    ir = np.where(act, 1.0 / r, 0.0)
    dg = -ir.sum(axis=1)
    d2g = -np.einsum("ij,ij->i", ir * ir, inv_c)
    with np.errstate(divide="ignore", invalid="ignore"):
        step = 2.0 * g * dg / (2.0 * dg * dg - g * d2g)
    return g, step


def identical_stages_payload_fraction(n_stages: int, c_m_s: float, eps: float, delta_v_m_s: float) -> float:
    """Payload fraction m_PL/m0 of N identical stages splitting delta-v equally.

    pi = [(exp(-v/(N c)) - eps)/(1 - eps)]^N; returns a value <= 0 when unreachable.

    References
    ----------
    .. [1] K. Niemeyer, Rocket Propulsion (open textbook), "Rocket staging".
    .. [2] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, eq. 11.50.
    """
    base = (math.exp(-delta_v_m_s / (n_stages * c_m_s)) - eps) / (1.0 - eps)
    if base <= 0:
        return 0.0
    return base**n_stages


def identical_stages_delta_v(n_stages: int, c_m_s: float, eps: float, payload_fraction: float) -> float:
    """Delta-v of N identical stages with overall payload fraction pi.

    v = N c ln[1 / (pi^(1/N) (1 - eps) + eps)].

    References
    ----------
    .. [1] K. Niemeyer, Rocket Propulsion (open textbook), "Rocket staging".
    """
    return n_stages * c_m_s * math.log(
        1.0 / (payload_fraction ** (1.0 / n_stages) * (1.0 - eps) + eps)
    )


def infinite_stages_delta_v(c_m_s: float, eps: float, payload_fraction: float) -> float:
    """Limit of `identical_stages_delta_v` as N -> infinity: c (1 - eps) ln(1/pi).

    References
    ----------
    .. [1] K. Niemeyer, Rocket Propulsion (open textbook), "Rocket staging".
    """
    return c_m_s * (1.0 - eps) * math.log(1.0 / payload_fraction)
