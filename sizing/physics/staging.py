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
    if dv < 0:
        raise ValueError(f"delta_v must be >= 0. Got {dv}.")
    dv_max = max_ideal_delta_v(c, e)
    if dv >= dv_max:
        raise ValueError(f"delta_v {dv:.6g} m/s is at or beyond the supremum {dv_max:.6g} m/s.")
    u_hi = max(ci * (1.0 - ei) for ci, ei in zip(c, e))
    if dv == 0.0:
        return StagingSolution(tuple(1.0 for _ in c), u_hi, 0.0, 0.0, 0)

    def fun(u: float) -> tuple[float, float]:
        g = -dv
        dg = 0.0
        for ci, ei in zip(c, e):
            r = 1.0 - u / ci
            if r > ei:
                g += ci * math.log(r / ei)
                dg -= 1.0 / r
        return g, dg

    u, it = _solve_u(fun, u_hi)
    n = _ratios(u, c, e)
    dv_got = sum(ci * math.log(ni) for ci, ni in zip(c, n))
    growth = sum(stage_log_growth(ni, ei) for ni, ei in zip(n, e))
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
    dv = np.broadcast_to(np.asarray(delta_v_m_s, dtype=float), c.shape[:1]).copy()
    m = c.shape[0]
    inv_c = 1.0 / c
    log_inv_e = np.log(1.0 / e)
    feasible = (dv < np.sum(c * log_inv_e, axis=1)) & (dv >= 0)
    hi = np.max(c * (1.0 - e), axis=1)
    lo = np.zeros(m)
    u = 0.5 * hi
    done = ~feasible | (dv == 0)
    u[dv == 0] = hi[dv == 0]
    idx = np.flatnonzero(~done)
    lo_i, hi_i, u_i = lo[idx], hi[idx], u[idx]
    c_i, ic_i, le_i, dv_i = c[idx], inv_c[idx], log_inv_e[idx], dv[idx]
    tol = _REL_TOL * 4 * hi[idx]
    for _ in range(max_iter):
        if idx.size == 0:
            break
        r = 1.0 - u_i[:, None] * ic_i
        lr = np.log(np.maximum(r, 1e-300)) + le_i  # ln(r/eps)
        act = lr > 0.0
        g = np.sum(np.where(act, c_i * lr, 0.0), axis=1) - dv_i
        dg = -np.sum(np.where(act, 1.0 / r, 0.0), axis=1)
        pos = g > 0
        lo_i = np.where(pos, u_i, lo_i)
        hi_i = np.where(pos, hi_i, u_i)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = g / dg
        fin = (np.abs(step) <= tol) | (hi_i - lo_i <= tol) | (g == 0)
        un = u_i - step
        bad = ~((un > lo_i) & (un < hi_i)) | ~np.isfinite(un)
        un = np.where(bad, 0.5 * (lo_i + hi_i), un)
        # a converged row keeps its last point (|g| is already at round-off there)
        u_i = np.where(fin, np.where(np.isfinite(u_i - step), u_i - step, u_i), un)
        if fin.any():
            u[idx[fin]] = u_i[fin]
            done[idx[fin]] = True
            keep = ~fin
            idx, lo_i, hi_i, u_i = idx[keep], lo_i[keep], hi_i[keep], u_i[keep]
            c_i, ic_i, le_i, dv_i, tol = c_i[keep], ic_i[keep], le_i[keep], dv_i[keep], tol[keep]
    converged = done & feasible
    if idx.size:
        u[idx] = u_i
    n = np.maximum(1.0, (1.0 - u[:, None] * inv_c) / e)
    n[~feasible] = np.nan
    u = np.where(feasible, u, np.nan)
    return n, u, converged


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
