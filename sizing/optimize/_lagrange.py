"""Unconstrained optimal staging by the Lagrange multiplier method (closed form + one root)."""

from __future__ import annotations

import math

from ..physics.staging import (
    max_ideal_delta_v,
    optimal_mass_ratios,
    optimal_mass_ratios_for_growth,
)
from ..problem.model import Problem, SolveFor
from ..result import SizingResult, Status
from ._common import analytic_trade_factors, build_result, failed_result

__all__ = ["solve_lagrange", "unreachable_message"]


def unreachable_message(dv: float, dv_max: float) -> str:
    from ..errors import MSG_TARGET_UNREACHABLE

    return (
        f"delta-v target {dv:,.6g} m/s {MSG_TARGET_UNREACHABLE} with any gross mass: "
        f"{dv_max:,.6g} m/s (sum of c_i ln(1/structural_coefficient_i)). "
        "Add a stage, raise Isp or lower structural coefficients."
    )


def solve_lagrange(problem: Problem) -> SizingResult:
    """Restricted staging optimum (Curtis Sec. 11.6) for any of the three `solve_for` modes."""
    c = [s.exhaust_velocity_m_s for s in problem.stages]
    eps = [s.structural_coefficient for s in problem.stages]
    dv_max = max_ideal_delta_v(c, eps)
    if problem.solve_for == SolveFor.DELTA_V:
        L = math.log(problem.gross_mass_kg / problem.payload_mass_kg)
        sol = optimal_mass_ratios_for_growth(c, eps, L)
        payload = problem.payload_mass_kg
    else:
        dv = problem.delta_v_m_s
        if dv >= dv_max:
            return failed_result(problem, status=Status.INFEASIBLE, method="lagrange",
                                 message=unreachable_message(dv, dv_max),
                                 best={"max_delta_v_m_s": dv_max})
        sol = optimal_mass_ratios(c, eps, dv)
        if problem.solve_for == SolveFor.GROSS_MASS:
            payload = problem.payload_mass_kg
        else:
            payload = problem.gross_mass_kg * math.exp(-sol.log_growth)
    result = build_result(problem, sol.mass_ratios, payload, method="lagrange",
                          n_iterations=sol.n_iterations)
    tf = analytic_trade_factors(problem, result, sol.u_m_s)
    return _with(result, trade_factors=tf)


def _with(result: SizingResult, **kw) -> SizingResult:
    from dataclasses import replace

    return replace(result, **kw)
