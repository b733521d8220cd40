"""Shared pieces of the solvers: building the result from mass ratios, trade factors."""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any, Callable, Mapping, Sequence

from ..physics.rocket import stack_masses
from ..problem.model import Problem, SolveFor
from ..result import ConstraintReport, SizingResult, StageResult, Status

__all__ = ["build_result", "failed_result", "analytic_trade_factors", "numeric_trade_factors",
           "log_growth", "WEAK_STAGE_NOTE"]

WEAK_STAGE_NOTE = "contributes nothing at the optimum (mass ratio 1): it is too weak to help"


def log_growth(n: Sequence[float], eps: Sequence[float]) -> float:
    """ln(gross/payload) of a stack with mass ratios n (Curtis Sec. 11.6)."""
    return sum(math.log(ni * (1.0 - ei) / (1.0 - ni * ei)) for ni, ei in zip(n, eps))


def build_result(
    problem: Problem,
    mass_ratios: Sequence[float],
    payload_mass_kg: float,
    *,
    method: str,
    n_iterations: int,
    status: Status = Status.OPTIMAL,
    message: str = "",
    trade_factors: dict[str, Any] | None = None,
    constraints: Sequence[ConstraintReport] = (),
    violations: dict[str, float] | None = None,
    warnings: Sequence[str] = (),
) -> SizingResult:
    """Assemble a `SizingResult` from optimal mass ratios and the payload mass."""
    eps = [s.structural_coefficient for s in problem.stages]
    n = [float(x) for x in mass_ratios]
    masses = stack_masses(n, eps, payload_mass_kg)
    c = [s.exhaust_velocity_m_s for s in problem.stages]
    dv_i = [ci * math.log(max(ni, 1.0)) for ci, ni in zip(c, n)]
    dv = sum(dv_i)
    stages = []
    warn = list(warnings)
    for i, st in enumerate(problem.stages):
        contributes = n[i] > 1.0 + 1e-9
        if not contributes:
            warn.append(f"stage {st.name!r} {WEAK_STAGE_NOTE}.")
        ign = float(masses["ignition_mass_kg"][i])
        stages.append(StageResult(
            name=st.name,
            isp_s=st.isp_s,
            exhaust_velocity_m_s=st.exhaust_velocity_m_s,
            structural_coefficient=st.structural_coefficient,
            ignition_mass_kg=ign,
            stage_mass_kg=float(masses["stage_mass_kg"][i]),
            propellant_mass_kg=float(masses["propellant_mass_kg"][i]),
            structural_mass_kg=float(masses["structural_mass_kg"][i]),
            burnout_mass_kg=ign - float(masses["propellant_mass_kg"][i]),
            mass_ratio=n[i],
            payload_ratio=float(masses["mass_above_kg"][i]) / ign,
            delta_v_m_s=dv_i[i],
            delta_v_share=dv_i[i] / dv if dv > 0 else 0.0,
            contributes=contributes,
        ))
    gross = float(masses["gross_mass_kg"])
    if not message:
        message = _summary(problem, gross, payload_mass_kg, dv)
    if violations is None:
        violations = constraint_violations(problem, stages, gross, dv)
    return SizingResult(
        status=status, success=status == Status.OPTIMAL, message=message,
        problem_name=problem.name, solve_for=str(problem.solve_for), method=method,
        n_iterations=n_iterations, gross_mass_kg=gross, payload_mass_kg=payload_mass_kg,
        delta_v_m_s=dv, stages=tuple(stages), trade_factors=trade_factors or {},
        constraints=tuple(constraints), violations=violations, warnings=tuple(warn),
    )


def _summary(problem: Problem, gross: float, payload: float, dv: float) -> str:
    if problem.solve_for == SolveFor.GROSS_MASS:
        return f"minimum gross mass {gross:,.6g} kg for {payload:,.6g} kg payload and {dv:,.6g} m/s"
    if problem.solve_for == SolveFor.PAYLOAD_MASS:
        return f"maximum payload {payload:,.6g} kg for {gross:,.6g} kg gross mass and {dv:,.6g} m/s"
    return f"maximum delta-v {dv:,.6g} m/s for {gross:,.6g} kg gross mass and {payload:,.6g} kg payload"


def constraint_violations(problem: Problem, stages: Sequence[StageResult], gross: float,
                          dv: float) -> dict[str, float]:
    """Re-evaluate every stated limit at a design; value > 0 is a violation (relative)."""
    out: dict[str, float] = {}
    if problem.max_gross_mass_kg is not None:
        out["max_gross_mass"] = gross / problem.max_gross_mass_kg - 1.0
    for sd, sr in zip(problem.stages, stages):
        if sd.min_mass_ratio is not None:
            out[f"{sd.name}.min_mass_ratio"] = sd.min_mass_ratio / sr.mass_ratio - 1.0
        if sd.max_mass_ratio is not None:
            out[f"{sd.name}.max_mass_ratio"] = sr.mass_ratio / sd.max_mass_ratio - 1.0
        if sd.min_delta_v_share is not None:
            out[f"{sd.name}.min_delta_v_share"] = sd.min_delta_v_share - sr.delta_v_share
        if sd.max_delta_v_share is not None:
            out[f"{sd.name}.max_delta_v_share"] = sr.delta_v_share - sd.max_delta_v_share
        if sd.max_ignition_mass_kg is not None:
            out[f"{sd.name}.max_ignition_mass"] = sr.ignition_mass_kg / sd.max_ignition_mass_kg - 1.0
    if problem.solve_for != SolveFor.DELTA_V and problem.delta_v_m_s is not None and problem.delta_v_m_s > 0:
        out["delta_v_target"] = abs(dv / problem.delta_v_m_s - 1.0)
    return out


def failed_result(problem: Problem, *, status: Status, message: str, method: str,
                  n_iterations: int = 0, best: dict[str, float] | None = None) -> SizingResult:
    """A complete result for a problem with no solution: NaN masses, stage names kept."""
    nan = math.nan
    stages = tuple(StageResult(
        name=s.name, isp_s=s.isp_s, exhaust_velocity_m_s=s.exhaust_velocity_m_s,
        structural_coefficient=s.structural_coefficient, ignition_mass_kg=nan, stage_mass_kg=nan,
        propellant_mass_kg=nan, structural_mass_kg=nan, burnout_mass_kg=nan, mass_ratio=nan,
        payload_ratio=nan, delta_v_m_s=nan, delta_v_share=nan, contributes=False,
    ) for s in problem.stages)
    return SizingResult(
        status=status, success=False, message=message, problem_name=problem.name,
        solve_for=str(problem.solve_for), method=method, n_iterations=n_iterations,
        gross_mass_kg=problem.gross_mass_kg if problem.gross_mass_kg is not None else nan,
        payload_mass_kg=problem.payload_mass_kg if problem.payload_mass_kg is not None else nan,
        delta_v_m_s=problem.delta_v_m_s if problem.delta_v_m_s is not None else nan,
        stages=stages, best=best or {},
    )


def analytic_trade_factors(problem: Problem, result: SizingResult, u_m_s: float) -> dict[str, Any]:
    """Gross-mass trade factors at an unconstrained optimum, from the Lagrange solution.

    With G = ln(m0/m_PL) minimised subject to sum c_i ln n_i = dv, the envelope
    theorem gives d ln m0/d c_i = -x_i/u (x_i = ln n_i, u = 1/eta),
    d ln m0/d dv = 1/u, and d ln m0/d eps_i = n_i/(1 - n_i eps_i) - 1/(1 - eps_i).
    Inert mass added to stage i acts as payload for it and all stages below
    it, so d m0/d m_inert,i = m0 / (mass above stage i).

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, Sec. 11.6
       (the Lagrangian whose multiplier is eta).
    .. [2] D. P. Bertsekas, Nonlinear Programming, 3rd ed., 2016, Prop. 3.2.2 / Sec. 3.2
       (sensitivity interpretation of Lagrange multipliers).
    """
    m0 = result.gross_mass_kg
    g0 = problem.g0_m_s2
    stages: dict[str, dict[str, float]] = {}
    for sd, sr in zip(problem.stages, result.stages):
        n, e = sr.mass_ratio, sd.structural_coefficient
        above = sr.ignition_mass_kg - sr.stage_mass_kg
        stages[sd.name] = {
            "per_structural_kg": m0 / above,
            "per_isp_s": -m0 * math.log(n) * g0 / u_m_s,
            "per_0_01_structural_coefficient": 0.01 * m0 * (n / (1.0 - n * e) - 1.0 / (1.0 - e)),
        }
    return {
        "basis": "change in gross mass at fixed payload and ideal delta-v (Lagrange multiplier)",
        "gross_mass_per_payload_kg": m0 / result.payload_mass_kg,
        "gross_mass_per_delta_v_kg_per_m_s": m0 / u_m_s,
        "stages": stages,
    }


def numeric_trade_factors(problem: Problem, result: SizingResult,
                          resolve: Callable[[Problem], SizingResult],
                          cap_duals: Callable[[Problem], Mapping[int, float]] | None = None,
                          ) -> dict[str, Any]:
    """Gross-mass trade factors by central differences of re-solved problems.

    Used where the optimum sits on a constraint. The problem is first restated
    as a minimum-gross-mass problem at the optimum's payload and delta-v.

    Inert mass added to stage i cannot be stated in a problem file, so its
    factor comes from the Lagrangian instead (envelope theorem): with the
    objective ln m0 and the ignition-mass caps ln m0_k <= ln cap_k (duals
    lambda_k), d m0/d m_inert,i = (m0 / A_i)(1 + sum_{k <= i} lambda_k), A_i the
    mass above stage i; `cap_duals(base)` returns {stage index: lambda_k}.

    References
    ----------
    .. [1] S. Boyd, L. Vandenberghe, Convex Optimization, 2004, Sec. 5.6.
    """
    base = replace(problem, solve_for=SolveFor.GROSS_MASS, payload_mass_kg=result.payload_mass_kg,
                   delta_v_m_s=result.delta_v_m_s, gross_mass_kg=None,
                   max_gross_mass_kg=None)

    def gross(p: Problem) -> float:
        r = resolve(p)
        return r.gross_mass_kg if r.success else math.nan

    def central(make: Callable[[float], Problem], h: float) -> float:
        return (gross(make(+h)) - gross(make(-h))) / (2.0 * h)

    m0 = result.gross_mass_kg
    mpl = result.payload_mass_kg
    dv = result.delta_v_m_s
    lam = dict(cap_duals(base)) if cap_duals is not None else {}
    stages: dict[str, dict[str, float]] = {}
    for i, (sd, sr) in enumerate(zip(problem.stages, result.stages)):
        def with_stage(**kw):
            st = list(base.stages)
            st[i] = replace(st[i], **kw)
            return replace(base, stages=tuple(st))

        h_isp = 1e-3 * sd.isp_s
        d_isp = central(lambda h: with_stage(isp_s=sd.isp_s + h,
                                             exhaust_velocity_m_s=(sd.isp_s + h) * problem.g0_m_s2), h_isp)
        e = sd.structural_coefficient
        h_e = 1e-4 * min(e, 1 - e)
        d_e = central(lambda h: with_stage(structural_coefficient=e + h), h_e)
        above = sr.ignition_mass_kg - sr.stage_mass_kg
        stages[sd.name] = {
            "per_structural_kg": m0 / above * (1.0 + sum(v for k, v in lam.items() if k <= i)),
            "per_isp_s": d_isp,
            "per_0_01_structural_coefficient": 0.01 * d_e,
        }
    d_pl = central(lambda h: replace(base, payload_mass_kg=mpl + h), 1e-4 * mpl)
    d_dv = central(lambda h: replace(base, delta_v_m_s=dv + h), 1e-4 * dv)
    return {
        "basis": "change in gross mass at fixed payload and ideal delta-v "
                 "(central differences with the limits kept)",
        "gross_mass_per_payload_kg": d_pl,
        "gross_mass_per_delta_v_kg_per_m_s": d_dv,
        "stages": stages,
    }
