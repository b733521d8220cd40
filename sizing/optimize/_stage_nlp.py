"""Sizing with stage mass models: structural mass as a function of propellant mass and thrust.

With a `StageMassModel` the structural coefficient is no longer a constant, so the
Lagrange closed form (Curtis Sec. 11.6) no longer applies. This module states the
sizing as a smooth nonlinear program and solves it with SLSQP:

    variables   y_i = ln m_p,i (every stage), psi_j (thrust-to-weight of stages whose
                T/W is a design variable), ln m_PL (maximum-payload problems);
    masses      top down: m0_i = m0_{i+1} + m_p,i + m_s,i(m_p,i, T_i), T_i = psi_i g0 m0_i
                (a fixed point, solved per evaluation) or a given thrust;
    delta-v     sum_i [c_i ln(m0_i/(m0_i - m_p,i)) - g0 f_i t_b,i], t_b,i = m_p,i c_i / T_i,
                f_i the stage's gravity_loss_factor (0 when not given: ideal delta-v);
    limits      gross and ignition-mass caps, mass-ratio and delta-v-share limits,
                T/W bounds.

Every evaluation is vectorised over the central-difference stencil, so one call of the
mass models gives the values and the Jacobian of the objective and every constraint.
When every model reduces to a fixed structural coefficient the program is the one of
Curtis Sec. 11.6 and the result agrees with the Lagrange solution (tested).

References
----------
.. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, Sec. 11.6.
.. [2] J. Nocedal, S. J. Wright, Numerical Optimization, 2nd ed., 2006, ch. 18 (SQP), Sec. 8.1
   (central-difference derivatives).
.. [3] G. P. Sutton, O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017, Sec. 4.3 (vertical
   flight: the gravity term g0 t_b of the velocity increment; section from memory).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import replace
from typing import Any

import numpy as np
from scipy.optimize import minimize

from ..errors import SizingConvergenceWarning
from ..physics.rocket import stack_masses
from ..physics.staging import optimal_mass_ratios, optimal_mass_ratios_for_growth
from ..physics.stage_model import StageMassModel
from ..problem.model import Problem, SolveFor
from ..result import SizingResult, StageResult, Status
from ._common import WEAK_STAGE_NOTE, constraint_violations, failed_result

__all__ = ["solve_stage_models", "stage_hardware_fields", "with_stage_hardware", "MSG_MODEL_METHOD"]

MSG_MODEL_METHOD = "handles fixed structural coefficients only; stages with [stage.structure] are sized by"

_H = 1e-6  # central-difference step in the (log-scaled) variables


class _Stack:
    """Vectorised masses, thrusts and delta-v of the stack for many variable vectors at once."""

    def __init__(self, problem: Problem) -> None:
        self.p = problem
        st = problem.stages
        self.n = len(st)
        self.c = np.array([s.exhaust_velocity_m_s for s in st])
        self.free_tw = [i for i, s in enumerate(st) if s.min_thrust_to_weight is not None]
        self.solve_payload = problem.solve_for == SolveFor.PAYLOAD_MASS
        self.n_var = self.n + len(self.free_tw) + (1 if self.solve_payload else 0)
        self.g0 = problem.g0_m_s2
        self._cache: dict[bytes, tuple[np.ndarray, np.ndarray]] = {}

    def structural(self, i: int, mp, thrust):
        s = self.p.stages[i]
        if s.mass_model is not None:
            return s.mass_model.structural_mass_kg(mp, thrust)
        e = s.structural_coefficient
        return e / (1.0 - e) * mp

    def masses(self, z: np.ndarray) -> dict[str, np.ndarray]:
        """z shape (k, n_var) -> arrays shape (k, N): m_p, m_s, T, m0, dv (ideal), loss."""
        z = np.atleast_2d(z)
        k = z.shape[0]
        mp = np.exp(z[:, : self.n])
        psi = {i: z[:, self.n + j] for j, i in enumerate(self.free_tw)}
        above = (np.exp(z[:, -1]) if self.solve_payload else np.full(k, self.p.payload_mass_kg, dtype=float))
        payload = above.copy()
        out = {key: np.zeros((k, self.n)) for key in ("mp", "ms", "thrust", "m0", "dv", "loss")}
        for i in range(self.n - 1, -1, -1):
            sd = self.p.stages[i]
            m = mp[:, i]
            tw = psi.get(i, sd.thrust_to_weight)
            if sd.thrust_n is not None:
                thrust = np.full(k, sd.thrust_n)
                ms = self.structural(i, m, thrust)
            elif tw is not None:
                thrust = tw * self.g0 * (above + m) * 1.1
                # T = psi g0 m0(T): a contraction (factor psi g0 dm_s/dT, a few per cent), iterated a
                # fixed number of times so that T is a smooth function of the variables
                for _ in range(7):  # factor below 0.03 for T/W up to 2: 0.03^7 ~ 2e-11
                    thrust = tw * self.g0 * (above + m + self.structural(i, m, thrust))
                ms = self.structural(i, m, thrust)
            else:
                thrust = np.full(k, np.nan)
                ms = self.structural(i, m, thrust)
            m0 = above + m + ms
            out["mp"][:, i], out["ms"][:, i], out["thrust"][:, i], out["m0"][:, i] = m, ms, thrust, m0
            out["dv"][:, i] = self.c[i] * np.log(m0 / (m0 - m))
            f = sd.gravity_loss_factor or 0.0
            out["loss"][:, i] = self.g0 * f * m * self.c[i] / thrust if f else 0.0
            above = m0
        out["payload"] = payload
        return out

    def functions(self, z: np.ndarray) -> np.ndarray:
        """Rows of [objective, inequality constraints (>= 0) ...] for each row of z."""
        o = self.masses(z)
        p = self.p
        net = (o["dv"] - o["loss"]).sum(axis=1)
        ln_m0 = np.log(o["m0"][:, 0])
        cols = []
        sf = p.solve_for
        if sf == SolveFor.GROSS_MASS:
            cols.append(ln_m0)
        elif sf == SolveFor.PAYLOAD_MASS:
            cols.append(-np.log(o["payload"]))
        else:
            cols.append(-net / 1000.0)
        if sf != SolveFor.DELTA_V:
            cols.append(net / p.delta_v_m_s - 1.0)
        if sf != SolveFor.GROSS_MASS:
            cols.append(math.log(p.gross_mass_kg) - ln_m0)
        if p.max_gross_mass_kg is not None and sf == SolveFor.GROSS_MASS:
            cols.append(math.log(p.max_gross_mass_kg) - ln_m0)
        ratio = o["m0"] / (o["m0"] - o["mp"])
        for i, s in enumerate(p.stages):
            if s.max_ignition_mass_kg is not None:
                cols.append(math.log(s.max_ignition_mass_kg) - np.log(o["m0"][:, i]))
            if s.min_mass_ratio is not None:
                cols.append(np.log(ratio[:, i]) - math.log(s.min_mass_ratio))
            if s.max_mass_ratio is not None:
                cols.append(math.log(s.max_mass_ratio) - np.log(ratio[:, i]))
            share = o["dv"][:, i] / o["dv"].sum(axis=1)
            if s.min_delta_v_share is not None:
                cols.append(share - s.min_delta_v_share)
            if s.max_delta_v_share is not None:
                cols.append(s.max_delta_v_share - share)
        return np.column_stack(cols)

    def value_and_jacobian(self, z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        key = z.tobytes()
        hit = self._cache.get(key)
        if hit is not None:
            return hit
        eye = np.eye(self.n_var) * _H
        stencil = np.vstack([z, z + eye, z - eye])
        with np.errstate(all="ignore"):
            f = self.functions(stencil)
        val = f[0]
        jac = (f[1: 1 + self.n_var] - f[1 + self.n_var:]).T / (2 * _H)
        if len(self._cache) > 64:
            self._cache.clear()
        self._cache[key] = (val, jac)
        return val, jac


def _initial_guess(problem: Problem, stack: _Stack) -> np.ndarray:
    """Lagrange solution with structural coefficients re-estimated from the models (a few passes)."""
    p = problem
    eps = np.array([0.1 if s.mass_model is not None else s.structural_coefficient for s in p.stages])
    c = stack.c
    tw0 = {i: p.stages[i].min_thrust_to_weight for i in stack.free_tw}
    payload = p.payload_mass_kg if p.payload_mass_kg is not None else 0.01 * p.gross_mass_kg
    mp = None
    for _ in range(6):
        try:
            if p.solve_for == SolveFor.DELTA_V:
                sol = optimal_mass_ratios_for_growth(c, eps, math.log(p.gross_mass_kg / payload))
            else:
                sol = optimal_mass_ratios(c, eps, p.delta_v_m_s)
                if p.solve_for == SolveFor.PAYLOAD_MASS:
                    payload = p.gross_mass_kg * math.exp(-sol.log_growth)
            m = stack_masses(np.asarray(sol.mass_ratios), eps, payload)
            mp = np.maximum(np.asarray(m["propellant_mass_kg"], dtype=float), 1e-3)
        except ValueError:
            eps = np.minimum(eps * 0.7, 0.5)
            continue
        z = _pack(stack, mp, tw0, payload)
        o = stack.masses(z)
        eps = np.clip(o["ms"][0] / (o["ms"][0] + o["mp"][0]), 1e-4, 0.9)
    if mp is None:
        mp = np.full(stack.n, 10.0 * payload)
    return _pack(stack, mp, tw0, payload)


def _pack(stack: _Stack, mp, tw: dict[int, float], payload: float) -> np.ndarray:
    parts = [np.log(mp)] + [np.array([tw[i]]) for i in stack.free_tw]
    if stack.solve_payload:
        parts.append(np.array([math.log(payload)]))
    return np.concatenate(parts)


def _run(problem: Problem, z0: np.ndarray | None = None):
    """SLSQP on the program of the module doc; returns (scipy result, stack, worst constraint)."""
    stack = _Stack(problem)
    if z0 is None:
        z0 = _initial_guess(problem, stack)
    n = stack.n
    lb = [math.log(1e-3)] * n + [problem.stages[i].min_thrust_to_weight for i in stack.free_tw]
    ub = [math.log(1e10)] * n + [problem.stages[i].max_thrust_to_weight or 1e3 for i in stack.free_tw]
    if stack.solve_payload:
        lb.append(math.log(1e-6))
        ub.append(math.log(problem.gross_mass_kg))
    z0 = np.clip(z0, lb, ub)
    # copies: the optimiser may write into the arrays it is handed, and these are cached
    fun = lambda z: float(stack.value_and_jacobian(z)[0][0])  # noqa: E731
    jac = lambda z: stack.value_and_jacobian(z)[1][0].copy()  # noqa: E731
    cons = [{"type": "ineq", "fun": lambda z: stack.value_and_jacobian(z)[0][1:].copy(),
             "jac": lambda z: stack.value_and_jacobian(z)[1][1:].copy()}]
    res = minimize(fun, z0, jac=jac, method="SLSQP", bounds=list(zip(lb, ub)), constraints=cons,
                   options={"ftol": problem.tolerance or 1e-12, "maxiter": problem.max_iterations or 300})
    val, _ = stack.value_and_jacobian(res.x)
    worst = float(np.min(val[1:])) if val.size > 1 else 0.0
    return res, stack, worst


def solve_stage_models(problem: Problem) -> SizingResult:
    """Size a problem with at least one stage mass model (SLSQP on the program of the module doc)."""
    res, stack, worst = _run(problem)
    if not res.success and res.status == 8 and worst > -1e-8:
        # a line search that stalls at a feasible point: restart once from there
        res2, stack, worst2 = _run(problem, res.x)
        if res2.success or worst2 > -1e-8:
            res, worst = res2, worst2
            res.success = True
    if not res.success or worst < -1e-6:
        status = (Status.MAX_ITERATIONS if res.status == 9 else
                  Status.INFEASIBLE if res.status in (4, 8) or worst < -1e-6 else Status.SOLVER_ERROR)
        msg = (f"stage-model sizing found no design meeting the target and every limit (status={status}: "
               f"{res.message}; worst constraint residual {worst:.3g}). The target may be beyond what these "
               "stages can reach: add a stage, raise Isp, or relax a limit.")
        warnings.warn(SizingConvergenceWarning(msg))
        return failed_result(problem, status=status, method="stage-model slsqp", n_iterations=int(res.nit),
                             message=msg)
    return _build(problem, stack, res.x, int(res.nit))


def stage_hardware_fields(stage, propellant_mass_kg: float, thrust_n: float | None,
                          ignition_mass_kg: float, g0: float) -> dict[str, Any]:
    """StageResult fields of the stage model for one sized stage (geometry, engines, breakdown)."""
    out: dict[str, Any] = {}
    if stage.propellant is None:
        return out
    model = stage.mass_model
    if model is None and stage.diameter_m is not None:
        model = StageMassModel(propellant=stage.propellant, diameter_m=stage.diameter_m)
    out["propellant"] = stage.propellant.name
    out["engine_count"] = stage.engine_count if model is None else (stage.engine_count or 1)
    if thrust_n is not None and math.isfinite(thrust_n):
        out["thrust_vac_n"] = float(thrust_n)
        out["thrust_to_weight"] = float(thrust_n / (g0 * ignition_mass_kg))
        out["burn_time_s"] = float(propellant_mass_kg * stage.exhaust_velocity_m_s / thrust_n)
    if model is None:
        f = stage.propellant.fuel_fraction
        out["fuel_mass_kg"] = propellant_mass_kg * f
        out["oxidiser_mass_kg"] = propellant_mass_kg * (1 - f)
        return out
    geo = model.geometry(propellant_mass_kg)
    out.update(
        fuel_mass_kg=float(geo.fuel_mass_kg), oxidiser_mass_kg=float(geo.oxidiser_mass_kg),
        fuel_volume_m3=float(geo.fuel_volume_m3), oxidiser_volume_m3=float(geo.oxidiser_volume_m3),
        fuel_tank_length_m=float(geo.fuel_tank_length_m), oxidiser_tank_length_m=float(geo.oxidiser_tank_length_m),
        stage_length_m=float(geo.stage_length_m), diameter_m=model.diameter_m,
        length_to_diameter=float(geo.length_to_diameter),
    )
    if stage.mass_model is not None:
        t = thrust_n if thrust_n is not None and math.isfinite(thrust_n) else 0.0
        items = model.breakdown(propellant_mass_kg, t)
        out["mass_breakdown_kg"] = {k: float(v) for k, v in items.items()}
        out["engine_mass_kg"] = float(items["engines"])
    return out


def _build(problem: Problem, stack: _Stack, z: np.ndarray, nit: int) -> SizingResult:
    o = stack.masses(z)
    mp, ms, thrust, m0, dv, loss = (o[k][0] for k in ("mp", "ms", "thrust", "m0", "dv", "loss"))
    payload = float(o["payload"][0])
    net = float((dv - loss).sum())
    ideal = float(dv.sum())
    stages = []
    notes = []
    for i, sd in enumerate(problem.stages):
        contributes = mp[i] > 1e-6 * m0[i] * 10
        if not contributes:
            notes.append(f"stage {sd.name!r} {WEAK_STAGE_NOTE}.")
        hw = stage_hardware_fields(sd, float(mp[i]), float(thrust[i]), float(m0[i]), problem.g0_m_s2)
        if sd.gravity_loss_factor:
            hw["gravity_loss_m_s"] = float(loss[i])
        if sd.mass_model is not None:
            notes += [f"stage {sd.name!r}: {t}" for t in sd.mass_model.review_notes(float(mp[i]), float(thrust[i]))]
        stages.append(StageResult(
            name=sd.name, isp_s=sd.isp_s, exhaust_velocity_m_s=sd.exhaust_velocity_m_s,
            structural_coefficient=float(ms[i] / (ms[i] + mp[i])), ignition_mass_kg=float(m0[i]),
            stage_mass_kg=float(mp[i] + ms[i]), propellant_mass_kg=float(mp[i]), structural_mass_kg=float(ms[i]),
            burnout_mass_kg=float(m0[i] - mp[i]), mass_ratio=float(m0[i] / (m0[i] - mp[i])),
            payload_ratio=float((m0[i] - mp[i] - ms[i]) / m0[i]), delta_v_m_s=float(dv[i]),
            delta_v_share=float(dv[i] / ideal) if ideal > 0 else 0.0, contributes=bool(contributes), **hw,
        ))
    gross = float(m0[0])
    losses = float(loss.sum())
    if problem.solve_for == SolveFor.GROSS_MASS:
        msg = f"minimum gross mass {gross:,.6g} kg for {payload:,.6g} kg payload and {net:,.6g} m/s"
    elif problem.solve_for == SolveFor.PAYLOAD_MASS:
        msg = f"maximum payload {payload:,.6g} kg for {gross:,.6g} kg gross mass and {net:,.6g} m/s"
    else:
        msg = f"maximum delta-v {net:,.6g} m/s for {gross:,.6g} kg gross mass and {payload:,.6g} kg payload"
    msg += " (stage mass models"
    msg += f"; {ideal:,.6g} m/s ideal less {losses:,.4g} m/s estimated gravity loss)" if losses > 0 else ")"
    base = SizingResult(
        status=Status.OPTIMAL, success=True, message=msg, problem_name=problem.name,
        solve_for=str(problem.solve_for), method="stage-model slsqp", n_iterations=nit, gross_mass_kg=gross,
        payload_mass_kg=payload, delta_v_m_s=ideal, stages=tuple(stages),
        warnings=tuple(notes),
        flight=({"losses_m_s": {"gravity_estimate": losses},
                 "delta_v_budget_m_s": {"ideal": ideal, "gravity loss (estimate)": -losses, "net (target)": net}}
                if losses > 0 else None),
    )
    viol = constraint_violations(problem, stages, gross, net)
    return replace(base, violations=viol, trade_factors=_trade_factors(problem, base, z))


def _trade_factors(problem: Problem, result: SizingResult, z: np.ndarray) -> dict[str, Any]:
    """Gross mass per kg of payload and per m/s of target, by central differences of re-sized problems.

    Per-stage factors of the fixed-coefficient solvers (per kg of structure, per 0.01 of structural
    coefficient) have no meaning here: the structure follows from the model.
    """
    if problem.solve_for != SolveFor.GROSS_MASS:
        return {}

    def gross(**kw) -> float:
        res, stack, worst = _run(replace(problem, **kw), z)
        return float(stack.masses(res.x)["m0"][0, 0]) if res.success and worst > -1e-6 else math.nan

    pl, dv = problem.payload_mass_kg, problem.delta_v_m_s
    hp, hv = 1e-3 * pl, 1e-3 * dv
    return {
        "basis": "change in gross mass at fixed payload and delta-v target (central differences of re-sized "
                 "stage-model problems)",
        "gross_mass_per_payload_kg": (gross(payload_mass_kg=pl + hp) - gross(payload_mass_kg=pl - hp)) / (2 * hp),
        "gross_mass_per_delta_v_kg_per_m_s": (gross(delta_v_m_s=dv + hv) - gross(delta_v_m_s=dv - hv)) / (2 * hv),
        "stages": {},
    }


def with_stage_hardware(problem: Problem, result: SizingResult) -> SizingResult:
    """Add propellant split, volumes and lengths to a fixed-coefficient result whose stages name a propellant."""
    if not result.success:
        return result
    stages = []
    for sd, sr in zip(problem.stages, result.stages):
        thrust = (sd.thrust_n if sd.thrust_n is not None else
                  sd.thrust_to_weight * problem.g0_m_s2 * sr.ignition_mass_kg if sd.thrust_to_weight else None)
        hw = stage_hardware_fields(sd, sr.propellant_mass_kg, thrust, sr.ignition_mass_kg, problem.g0_m_s2)
        stages.append(replace(sr, **hw) if hw else sr)
    return replace(result, stages=tuple(stages))
