"""Constrained optimal staging as a convex program (cvxpy, exponential cone).

In the variables x_i = ln n_i (log mass ratios) the growth of stage i,

    g_i(x_i) = ln(m0_i / m0_{i+1}) = x_i + ln(1 - eps_i) - ln(1 - eps_i e^{x_i}),

is convex, the delta-v sum_i c_i x_i is linear, and the log of any stage's
ignition mass is ln m_PL + sum_{j >= i} g_j: every limit a designer states
(mass-ratio bounds, delta-v shares, caps on gross or ignition mass) is a
convex constraint. The Lagrange solution of Curtis Sec. 11.6 is the special
case with no limits. Dual values give d(objective)/d(limit).

References
----------
.. [1] S. Boyd, L. Vandenberghe, Convex Optimization, 2004, Sec. 4.5 (geometric
   programming in convex form), Sec. 5.6 (sensitivity from dual variables).
.. [2] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, Sec. 11.6.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, replace

import numpy as np

from ..errors import SizingConvergenceWarning
from ..physics.staging import max_ideal_delta_v
from ..problem.model import Problem, SolveFor
from ..result import ConstraintReport, SizingResult, Status
from ._common import build_result, failed_result, numeric_trade_factors

__all__ = ["solve_cvxpy"]

_BIND_TOL = 1e-6


@dataclass
class _Model:
    prob: object
    x: object
    y: object
    named: list  # (name, constraint, limit, unit, d f/d limit scale, value fn)


def _build(problem: Problem, objective: SolveFor, *, drop_target: bool = False):
    import cvxpy as cp

    st = problem.stages
    N = len(st)
    c = np.array([s.exhaust_velocity_m_s for s in st])
    eps = np.array([s.structural_coefficient for s in st])
    x = cp.Variable(N, name="log_mass_ratio")
    g = x + np.log1p(-eps) - cp.log(1 - cp.multiply(eps, cp.exp(x)))
    # delta-v in units of the scale below keeps every row of the program near 1
    dv_scale = problem.delta_v_m_s if problem.delta_v_m_s else float(np.mean(c))
    c_scaled = c / dv_scale
    dv = c_scaled @ x
    cons = [x >= 0]
    named: list = []
    y = None
    if objective == SolveFor.PAYLOAD_MASS:
        y = cp.Variable(name="log_payload")
        ln_pl = y
    else:
        ln_pl = math.log(problem.payload_mass_kg)

    if objective == SolveFor.GROSS_MASS:
        obj = cp.Minimize(cp.sum(g))
        if not drop_target:
            cons.append(dv == 1.0)
    elif objective == SolveFor.PAYLOAD_MASS:
        obj = cp.Maximize(y)
        cons.append(y + cp.sum(g) <= math.log(problem.gross_mass_kg))
        if not drop_target:
            cons.append(dv == 1.0)
    else:
        obj = cp.Maximize(dv)
        growth = math.log(problem.gross_mass_kg / problem.payload_mass_kg)
        cons.append(cp.sum(g) <= growth)
        # keep x strictly inside the domain when nothing else bounds it
        cons.append(x <= np.log(1.0 / eps) - 1e-9)

    def add(name, con, limit, unit, dfdb):
        cons.append(con)
        named.append((name, con, limit, unit, dfdb))

    dv_now = problem.delta_v_m_s if objective != SolveFor.DELTA_V else None
    for i, s in enumerate(st):
        if s.min_mass_ratio is not None:
            b = s.min_mass_ratio
            add(f"{s.name}.min_mass_ratio", -x[i] <= -math.log(b), b, "-", 1.0 / b)
        if s.max_mass_ratio is not None:
            b = s.max_mass_ratio
            add(f"{s.name}.max_mass_ratio", x[i] <= math.log(b), b, "-", -1.0 / b)
        if s.min_delta_v_share is not None:
            b = s.min_delta_v_share
            add(f"{s.name}.min_delta_v_share", b * dv - c_scaled[i] * x[i] <= 0, b, "-", "dv")
        if s.max_delta_v_share is not None:
            b = s.max_delta_v_share
            add(f"{s.name}.max_delta_v_share", c_scaled[i] * x[i] - b * dv <= 0, b, "-", "-dv")
        if s.max_ignition_mass_kg is not None:
            b = s.max_ignition_mass_kg
            add(f"{s.name}.max_ignition_mass", ln_pl + cp.sum(g[i:]) <= math.log(b), b, "kg", -1.0 / b)
    if problem.max_gross_mass_kg is not None and objective != SolveFor.PAYLOAD_MASS:
        b = problem.max_gross_mass_kg
        add("max_gross_mass", ln_pl + cp.sum(g) <= math.log(b), b, "kg", -1.0 / b)
    del dv_now
    prob = cp.Problem(obj, cons)
    prob._dv_scale = dv_scale  # d(constraint)/d(share) is in these units
    return prob, x, y, named


def _run(prob, problem: Problem):
    import cvxpy as cp

    opts = {}
    if problem.max_iterations is not None:
        opts["max_iter"] = problem.max_iterations
    # Tight tolerances: the optimum is flat to first order in the split, so mass
    # ratios are only as good as the square root of the duality gap.
    tol = problem.tolerance if problem.tolerance is not None else 1e-12
    status, err = "solver_error", ""
    for t in (tol, max(tol, 1e-9)):
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                prob.solve(solver=cp.CLARABEL, tol_gap_abs=t, tol_gap_rel=t, tol_feas=t,
                           tol_ktratio=t, **opts)
        except cp.error.SolverError as exc:  # pragma: no cover - solver-specific
            status, err = "solver_error", str(exc)
            continue
        status = prob.status
        if status != cp.OPTIMAL_INACCURATE:
            break
    return status, err


def solve_cvxpy(problem: Problem) -> SizingResult:
    """Solve any `solve_for` mode with every stated limit, by convex optimisation."""
    import cvxpy as cp

    prob, x, y, named = _build(problem, problem.solve_for)
    status, err = _run(prob, problem)
    iters = int(getattr(prob.solver_stats, "num_iters", 0) or 0) if prob.solver_stats else 0
    if status in (cp.INFEASIBLE, cp.INFEASIBLE_INACCURATE):
        best, msg = _best_reachable(problem)
        return failed_result(problem, status=Status.INFEASIBLE, method="cvxpy", message=msg,
                             n_iterations=iters, best=best)
    if status not in (cp.OPTIMAL, cp.OPTIMAL_INACCURATE) or x.value is None:
        st = Status.MAX_ITERATIONS if status == cp.USER_LIMIT else Status.SOLVER_ERROR
        msg = f"cvxpy stopped with status {status} {err}".strip()
        warnings.warn(SizingConvergenceWarning(
            f"cvxpy stopped (status={st}). Raise [solver].max_iterations or loosen [solver].tolerance."))
        return failed_result(problem, status=st, method="cvxpy", message=msg, n_iterations=iters)
    xv = np.maximum(np.asarray(x.value, dtype=float), 0.0)
    n = np.exp(xv)
    if problem.solve_for == SolveFor.PAYLOAD_MASS:
        payload = float(math.exp(y.value))
    else:
        payload = problem.payload_mass_kg
    status_out = Status.OPTIMAL
    note = ""
    if status == cp.OPTIMAL_INACCURATE:
        note = " (solver reports reduced accuracy)"
    result = build_result(problem, n, payload, method="cvxpy", n_iterations=iters)
    reports = _constraint_reports(problem, result, named)
    tf = numeric_trade_factors(problem, result, _resolve_quiet, cap_duals=mass_cap_duals)
    return replace(result, status=status_out, message=result.message + note,
                   constraints=tuple(reports), trade_factors=tf)


def mass_cap_duals(p: Problem) -> dict[int, float]:
    """Dual values of the gross- and ignition-mass caps of a minimum-gross-mass problem.

    Keyed by stage index (the gross-mass cap counts as stage 0's ignition
    mass); each is d(ln m0)/d(ln of that ignition mass) at the optimum.
    """
    if p.max_gross_mass_kg is None and not any(s.max_ignition_mass_kg is not None for s in p.stages):
        return {}
    prob, _x, _y, named = _build(p, SolveFor.GROSS_MASS)
    _run(prob, p)
    out: dict[int, float] = {}
    index = {s.name: i for i, s in enumerate(p.stages)}
    for name, con, *_rest in named:
        if name.endswith(".max_ignition_mass") or name == "max_gross_mass":
            k = 0 if name == "max_gross_mass" else index[name.rsplit(".", 1)[0]]
            lam = float(np.sum(con.dual_value)) if con.dual_value is not None else 0.0
            out[k] = out.get(k, 0.0) + max(lam, 0.0)
    return out


def _resolve_quiet(p: Problem) -> SizingResult:
    prob, x, y, _ = _build(p, p.solve_for)
    _run(prob, p)
    if x.value is None:
        return failed_result(p, status=Status.SOLVER_ERROR, method="cvxpy", message="")
    n = np.exp(np.maximum(np.asarray(x.value, dtype=float), 0.0))
    return build_result(p, n, p.payload_mass_kg, method="cvxpy", n_iterations=0)


def _constraint_reports(problem: Problem, result: SizingResult, named) -> list[ConstraintReport]:
    m0, mpl, dv = result.gross_mass_kg, result.payload_mass_kg, result.delta_v_m_s
    dv_scale = problem.delta_v_m_s if problem.delta_v_m_s else float(np.mean(
        [s.exhaust_velocity_m_s for s in problem.stages]))
    if problem.solve_for == SolveFor.GROSS_MASS:
        scale, unit, sign = m0, "kg gross mass", 1.0
    elif problem.solve_for == SolveFor.PAYLOAD_MASS:
        scale, unit, sign = mpl, "kg payload", -1.0
    else:
        scale, unit, sign = dv_scale, "m/s delta-v", -1.0
    values = {}
    for sd, sr in zip(problem.stages, result.stages):
        values[f"{sd.name}.min_mass_ratio"] = sr.mass_ratio
        values[f"{sd.name}.max_mass_ratio"] = sr.mass_ratio
        values[f"{sd.name}.min_delta_v_share"] = sr.delta_v_share
        values[f"{sd.name}.max_delta_v_share"] = sr.delta_v_share
        values[f"{sd.name}.max_ignition_mass"] = sr.ignition_mass_kg
    values["max_gross_mass"] = m0
    out = []
    for name, con, limit, lim_unit, dfdb in named:
        lam = float(np.sum(con.dual_value)) if con.dual_value is not None else 0.0
        lam = max(lam, 0.0)
        if dfdb == "dv":
            dfdb_v = dv / dv_scale
        elif dfdb == "-dv":
            dfdb_v = -dv / dv_scale
        else:
            dfdb_v = dfdb
        # minimise J: dJ*/db = lam * df/db; J = ln m0 (scale m0), -ln m_PL (scale m_PL), -dv
        sens = sign * lam * dfdb_v * scale
        value = values[name]
        binding = abs(value - limit) <= _BIND_TOL * max(abs(limit), 1e-12) * 100 and lam > 1e-9
        out.append(ConstraintReport(
            name=name, limit=limit, value=value, unit=lim_unit, binding=bool(binding),
            sensitivity=sens if binding else 0.0, sensitivity_unit=f"{unit} per {lim_unit}",
        ))
    return out


def _best_reachable(problem: Problem) -> tuple[dict[str, float], str]:
    """Best value reachable under the stated limits, for an infeasible problem's message."""
    import cvxpy as cp

    c = [s.exhaust_velocity_m_s for s in problem.stages]
    eps = [s.structural_coefficient for s in problem.stages]
    if problem.solve_for in (SolveFor.GROSS_MASS, SolveFor.PAYLOAD_MASS):
        # most delta-v the limits allow: for a fixed gross mass if one is given or capped
        gross = problem.gross_mass_kg or problem.max_gross_mass_kg
        payload = problem.payload_mass_kg
        if problem.solve_for == SolveFor.PAYLOAD_MASS:
            payload = gross * 1e-6
        if gross is not None and payload is not None and gross > payload:
            alt = replace(problem, solve_for=SolveFor.DELTA_V, gross_mass_kg=gross,
                          payload_mass_kg=payload, max_gross_mass_kg=None)
            prob, x, _, _ = _build(alt, SolveFor.DELTA_V)
            _run(prob, alt)
            if x.value is not None and prob.status in (cp.OPTIMAL, cp.OPTIMAL_INACCURATE):
                dv_best = float(np.dot(c, np.maximum(x.value, 0)))
                what = "this gross mass cap" if problem.max_gross_mass_kg else "this gross mass"
                return ({"max_delta_v_m_s": dv_best},
                        f"delta-v target {problem.delta_v_m_s:,.6g} m/s cannot be met under the stated "
                        f"limits; the most reachable with {what} is {dv_best:,.6g} m/s. "
                        "Relax a limit or add a stage.")
        # no mass cap: most delta-v under the ratio and share limits
        alt = replace(problem, solve_for=SolveFor.GROSS_MASS)
        prob, x, _, _ = _build(alt, SolveFor.GROSS_MASS, drop_target=True)
        dv_expr = np.array(c) @ x
        prob2 = cp.Problem(cp.Maximize(dv_expr), prob.constraints + [x <= np.log(1.0 / np.array(eps)) - 1e-9])
        try:
            prob2.solve(solver=cp.CLARABEL)
        except cp.error.SolverError:
            pass
        if x.value is not None and prob2.status in (cp.OPTIMAL, cp.OPTIMAL_INACCURATE):
            dv_best = float(np.dot(c, np.maximum(x.value, 0)))
            return ({"max_delta_v_m_s": dv_best},
                    f"delta-v target {problem.delta_v_m_s:,.6g} m/s cannot be met under the stated "
                    f"limits; the most they allow is {dv_best:,.6g} m/s. Relax a limit or add a stage.")
        sup = max_ideal_delta_v(c, eps)
        return ({"max_delta_v_m_s": sup},
                "the stated limits contradict each other (no mass split satisfies them all); "
                f"without limits the stages could reach {sup:,.6g} m/s.")
    # max delta-v with given gross and payload: limits need more growth than available
    alt = replace(problem, solve_for=SolveFor.GROSS_MASS, delta_v_m_s=0.0)
    prob, x, _, _ = _build(alt, SolveFor.GROSS_MASS, drop_target=True)
    try:
        prob.solve(solver=cp.CLARABEL)
    except cp.error.SolverError:
        pass
    if prob.status in (cp.OPTIMAL, cp.OPTIMAL_INACCURATE):
        g_min = float(prob.value)
        need = problem.payload_mass_kg * math.exp(g_min)
        return ({"min_gross_mass_kg": need},
                f"gross mass {problem.gross_mass_kg:,.6g} kg is too small for the stated limits with "
                f"{problem.payload_mass_kg:,.6g} kg payload; they need at least {need:,.6g} kg.")
    return ({}, "the stated limits contradict each other; no mass split satisfies them all.")
