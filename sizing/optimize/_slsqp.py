"""Plain scipy SLSQP formulation of optimal staging: a cross-check and benchmark baseline.

Variables are the log mass ratios x_i = ln n_i; the objective and limits are
those of the convex program in `_cvx` (Curtis Sec. 11.6 restated), handed to
`scipy.optimize.minimize(method="SLSQP")` with analytic gradients.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
from scipy.optimize import minimize

from ..errors import SizingConvergenceWarning
from ..problem.model import Problem, SolveFor
from ..result import SizingResult, Status
from ._common import build_result, failed_result, numeric_trade_factors

__all__ = ["solve_slsqp", "slsqp_min_gross_log_growth"]


def _growth(x, eps):
    return np.sum(x + np.log1p(-eps) - np.log1p(-eps * np.exp(x)))


def _growth_grad(x, eps):
    n = np.exp(x)
    return 1.0 / (1.0 - eps * n)


def slsqp_min_gross_log_growth(c, eps, delta_v_m_s, *, x0=None, tol=1e-12, maxiter=200):
    """Minimise ln(m0/m_PL) over log mass ratios with sum c_i x_i = dv (SLSQP).

    Returns the scipy OptimizeResult; `.x` holds the log mass ratios.
    """
    c = np.asarray(c, dtype=float)
    eps = np.asarray(eps, dtype=float)
    if x0 is None:
        x0 = np.full(c.size, delta_v_m_s / c.sum())
    ub = np.log(1.0 / eps) - 1e-9
    return minimize(
        _growth, x0, args=(eps,), jac=_growth_grad, method="SLSQP",
        bounds=list(zip(np.zeros_like(c), ub)),
        constraints=[{"type": "eq", "fun": lambda x: (c @ x - delta_v_m_s) / delta_v_m_s,
                      "jac": lambda x: c / delta_v_m_s}],
        options={"ftol": tol, "maxiter": maxiter},
    )


def solve_slsqp(problem: Problem) -> SizingResult:
    """Solve with scipy SLSQP (all `solve_for` modes, mass-ratio and share limits, caps).

    Trade factors come from central differences of quiet re-solves.
    """
    from dataclasses import replace

    result = _solve(problem)
    if not result.success:
        return result
    from ._cvx import mass_cap_duals  # SLSQP returns no multipliers; the convex program does

    return replace(result, trade_factors=numeric_trade_factors(problem, result, _quiet,
                                                               cap_duals=mass_cap_duals))


def _quiet(p: Problem) -> SizingResult:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return _solve(p)


def _solve(problem: Problem) -> SizingResult:
    st = problem.stages
    c = np.array([s.exhaust_velocity_m_s for s in st])
    eps = np.array([s.structural_coefficient for s in st])
    N = c.size
    lb = np.array([math.log(s.min_mass_ratio) if s.min_mass_ratio else 0.0 for s in st])
    ub = np.array([math.log(s.max_mass_ratio) if s.max_mass_ratio else math.log(1 / s.structural_coefficient) - 1e-9
                   for s in st])
    maxiter = problem.max_iterations or 500
    tol = problem.tolerance or 1e-12
    sf = problem.solve_for
    cons = []
    dv_target = problem.delta_v_m_s
    if sf == SolveFor.DELTA_V:
        L = math.log(problem.gross_mass_kg / problem.payload_mass_kg)
        fun = lambda x: -(c @ x) / 1000.0  # noqa: E731
        jac = lambda x: -c / 1000.0  # noqa: E731
        cons.append({"type": "ineq", "fun": lambda x: L - _growth(x, eps),
                     "jac": lambda x: -_growth_grad(x, eps)})
        x0 = np.clip(np.full(N, 0.5 * L / N), lb, ub)
    else:
        fun = lambda x: _growth(x, eps)  # noqa: E731
        jac = lambda x: _growth_grad(x, eps)  # noqa: E731
        cons.append({"type": "eq", "fun": lambda x: (c @ x - dv_target) / dv_target,
                     "jac": lambda x: c / dv_target})
        x0 = np.clip(np.full(N, dv_target / c.sum()), lb, ub)
    ln_pl = None if sf == SolveFor.PAYLOAD_MASS else math.log(problem.payload_mass_kg)
    ln_m0_fixed = math.log(problem.gross_mass_kg) if sf == SolveFor.PAYLOAD_MASS else None

    def ln_payload(x):
        return ln_m0_fixed - _growth(x, eps) if ln_pl is None else ln_pl

    for i, s in enumerate(st):
        if s.min_delta_v_share is not None:
            b = s.min_delta_v_share
            cons.append({"type": "ineq", "fun": lambda x, i=i, b=b: (c[i] * x[i] - b * (c @ x)) / 1000.0})
        if s.max_delta_v_share is not None:
            b = s.max_delta_v_share
            cons.append({"type": "ineq", "fun": lambda x, i=i, b=b: (b * (c @ x) - c[i] * x[i]) / 1000.0})
        if s.max_ignition_mass_kg is not None:
            lb_i = math.log(s.max_ignition_mass_kg)
            cons.append({"type": "ineq", "fun": lambda x, i=i, lb_i=lb_i: lb_i - ln_payload(x) - _growth(x[i:], eps[i:])})
    if problem.max_gross_mass_kg is not None and sf != SolveFor.PAYLOAD_MASS:
        lg = math.log(problem.max_gross_mass_kg)
        cons.append({"type": "ineq", "fun": lambda x: lg - ln_payload(x) - _growth(x, eps)})
    res = minimize(fun, x0, jac=jac, method="SLSQP", bounds=list(zip(lb, ub)), constraints=cons,
                   options={"ftol": tol, "maxiter": maxiter})
    if not res.success:
        status = Status.MAX_ITERATIONS if res.status == 9 else Status.INFEASIBLE if res.status in (4, 8) else Status.SOLVER_ERROR
        warnings.warn(SizingConvergenceWarning(
            f"slsqp stopped after {res.nit} iterations (status={status}): {res.message}. "
            "Raise [solver].max_iterations or use method = 'cvxpy'."))
        return failed_result(problem, status=status, method="slsqp", n_iterations=int(res.nit),
                             message=f"slsqp: {res.message}")
    x = np.maximum(res.x, 0.0)
    payload = math.exp(ln_payload(x))
    return build_result(problem, np.exp(x), payload, method="slsqp", n_iterations=int(res.nit))
