"""Evaluate study cases: build the problem, size it, derive metrics, check constraints.

Runs inside worker processes. Every function here takes and returns plain,
picklable data (dicts), so the local process pool and Dask workers can call
it alike. A failing case never raises: it comes back with a status and a
one-line reason.

Case statuses
-------------
``ok``          sized, and every study constraint met (a feasible design)
``infeasible``  well-formed but the sizing found no solution (solver message kept)
``rejected``    sized, but a study constraint is violated (which one, by how much)
``error``       the case's problem is invalid (e.g. an axis value out of range) or
                the code raised; the one-line reason is kept
``crashed``     the worker process died on this case twice (set by the runner)
"""

from __future__ import annotations

import difflib
import math
import time
import traceback
from dataclasses import dataclass
from typing import Any, Callable, Mapping, Sequence

from ..errors import ProblemDefinitionError
from .spec import Bound, Objective

__all__ = [
    "EvalContext",
    "STATUSES",
    "evaluate_case",
    "evaluate_cases",
    "is_batch_eligible",
    "result_metrics",
]

STATUSES = ("ok", "infeasible", "rejected", "error", "crashed")


@dataclass(frozen=True)
class EvalContext:
    """What a worker needs besides the cases: objectives, constraints, costs.

    Attributes
    ----------
    objectives, bounds : tuple
    cost_per_dry_kg, cost_per_stage, cost_per_propellant_kg : float
        Defaults of the cost model [cost unit per kg, per stage, per kg].
    propellant_cost_per_propellant_kg : dict
        Propellant name -> cost per kg of propellant, overriding the default.
    method : str
        Passed to `solve(method=...)`.
    solver : str
        'auto', 'batch' or 'each'.
    source : str
        Study file, named in case error messages.
    """

    objectives: tuple[Objective, ...]
    bounds: tuple[Bound, ...]
    cost_per_dry_kg: float = 0.0
    cost_per_stage: float = 0.0
    cost_per_propellant_kg: float = 0.0
    propellant_cost_per_propellant_kg: Mapping[str, float] | None = None
    method: str = "auto"
    solver: str = "auto"
    source: str = "<study>"
    study: Any = None

    @classmethod
    def from_study(cls, study) -> "EvalContext":
        spec = study.spec
        cost = spec.cost
        return cls(
            objectives=study.objectives,
            bounds=study.bounds,
            cost_per_dry_kg=cost.per_dry_kg if cost else 0.0,
            cost_per_stage=cost.per_stage if cost else 0.0,
            cost_per_propellant_kg=cost.per_propellant_kg if cost else 0.0,
            propellant_cost_per_propellant_kg={
                k: p.cost_per_propellant_kg for k, p in spec.propellants.items()
                if p.cost_per_propellant_kg is not None},
            method=spec.study.method,
            solver=spec.study.solver,
            source=study.source,
            study=study,
        )

    def problem_data(self, case: Mapping[str, Any]) -> dict[str, Any]:
        """The case's raw problem structure (built from its inputs when not attached)."""
        data = case.get("problem")
        if data is None:
            from .spec import apply_case

            data = apply_case(self.study, case["inputs"])
        return data


#: Solver bookkeeping, not properties of a design: kept in the stored result, not a metric
#: (the batch solver has no per-case iteration count).
_SOLVER_COUNTS = frozenset({"n_iterations", "iterations"})


def _one_line(text: str) -> str:
    return " ".join(str(text).split())[:500]


def _num(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def result_metrics(result: Mapping[str, Any], problem, inputs: Mapping[str, Any],
                   ctx: EvalContext) -> dict[str, float]:
    """Flat metrics of one sized design (from `SizingResult.to_dict()`).

    Every numeric top-level entry of the result is kept under its own name
    (except the solver's iteration counts; ``target_error`` and
    ``target_tolerance`` get their unit suffix, ``_m`` for an apogee target and
    ``_m_s`` for an orbit target);
    a numeric sub-table ``x`` gives ``x.key`` entries and, for ``losses_m_s``,
    ``losses_total_m_s``; ``stage.NAME.ignition_mass_kg``, ``.propellant_mass_kg``,
    ``.structural_mass_kg`` and ``.delta_v_m_s`` when an objective or bound names one.
    Derived: ``dry_mass_kg`` and ``propellant_mass_kg``
    (sums over stages), ``n_stages``, ``cost`` (cost model), and
    ``liftoff_thrust_to_weight`` when the bottom stage states thrust or
    thrust-to-weight.

    The cost model (user-defined, no published method): for each stage,
    structural mass x cost per dry kg + fixed cost per stage + propellant mass
    x cost per propellant kg. Per-stage values come from the propellant
    choice, then the stage's own keys, then the [cost] defaults.
    """
    m: dict[str, float] = {}
    target = result.get("target") if isinstance(result.get("target"), Mapping) else {}
    # Target error and tolerance are in the target's unit: an apogee target in m; an orbit
    # target in m/s (burnout speed minus circular speed, see `sizing.optimize.flight`).
    err_unit = "m" if "apogee_m" in target else "m_s"
    for k, v in result.items():
        if k in _SOLVER_COUNTS:
            continue
        if _num(v):
            m[f"{k}_{err_unit}" if k in ("target_error", "target_tolerance") else k] = float(v)
        elif isinstance(v, Mapping):
            vals = {kk: float(vv) for kk, vv in v.items() if _num(vv)}
            for kk, vv in vals.items():
                m[f"{k}.{kk}"] = vv
            if k == "losses_m_s" and vals:
                m["losses_total_m_s"] = float(v.get("total", sum(vals.values())))
    stages = result.get("stages") or []
    # per-stage metrics only where the study ranks or limits one (they are also in the
    # stored result's stages; keeping them out of every row keeps the store's writes small)
    wanted = {o.metric for o in ctx.objectives} | {b.metric for b in ctx.bounds}
    if any(w.startswith("stage.") for w in wanted):
        for st in stages:
            for q in ("ignition_mass_kg", "propellant_mass_kg", "structural_mass_kg", "delta_v_m_s",
                      "structural_coefficient", "stage_length_m", "length_to_diameter", "engine_mass_kg",
                      "thrust_to_weight", "burn_time_s"):
                key = f"stage.{st.get('name')}.{q}"
                if key in wanted and _num(st.get(q)):
                    m[key] = float(st[q])
    m["n_stages"] = float(len(stages))
    m["dry_mass_kg"] = float(sum(s.get("structural_mass_kg", 0.0) for s in stages))
    m["propellant_mass_kg"] = float(sum(s.get("propellant_mass_kg", 0.0) for s in stages))
    cost = 0.0
    pcost = ctx.propellant_cost_per_propellant_kg or {}
    defs = {s.name: s for s in problem.stages}
    for s in stages:
        d = defs.get(s.get("name"))
        per_dry = d.cost_per_dry_kg if d is not None and d.cost_per_dry_kg is not None else ctx.cost_per_dry_kg
        fixed = d.cost_fixed if d is not None and d.cost_fixed is not None else ctx.cost_per_stage
        prop = inputs.get(f"propellant.{s.get('name')}")
        per_prop = pcost.get(prop, ctx.cost_per_propellant_kg) if prop else ctx.cost_per_propellant_kg
        cost += (s.get("structural_mass_kg", 0.0) * per_dry + fixed
                 + s.get("propellant_mass_kg", 0.0) * per_prop)
    m["cost"] = cost
    if "liftoff_thrust_to_weight" not in m and problem.stages:
        bottom = problem.stages[0]
        gross = m.get("gross_mass_kg")
        if bottom.thrust_n is not None and gross:
            m["liftoff_thrust_to_weight"] = bottom.thrust_n / (gross * problem.g0_m_s2)
        elif bottom.thrust_to_weight is not None:
            m["liftoff_thrust_to_weight"] = float(bottom.thrust_to_weight)
    return m


def _check(metrics: Mapping[str, float], ctx: EvalContext) -> tuple[str, str]:
    """Status and message from the study constraints and objective metrics."""
    for ob in ctx.objectives:
        if ob.metric not in metrics:
            near = difflib.get_close_matches(ob.metric, list(metrics), n=1)
            hint = f"; did you mean {near[0]!r}?" if near else ";"
            return "error", (f"objective metric {ob.metric!r} is not produced by this case{hint} "
                             f"available: {', '.join(sorted(metrics))}")
    for b in ctx.bounds:
        v = metrics.get(b.metric)
        if v is None:
            return "error", (f"constraint {b.label}: metric {b.metric!r} is not produced by this "
                             f"case (ideal delta-v problems have no trajectory; thrust or "
                             f"thrust_to_weight gives liftoff_thrust_to_weight)")
        if b.max_value is not None and v > b.max_value:
            return "rejected", f"{b.label}: {b.metric} = {v:.6g} > {b.max_value:.6g}"
        if b.min_value is not None and v < b.min_value:
            return "rejected", f"{b.label}: {b.metric} = {v:.6g} < {b.min_value:.6g}"
    return "ok", ""


def _outcome(case: Mapping[str, Any], status: str, message: str, t0: float,
             metrics: dict | None = None, result: dict | None = None) -> dict[str, Any]:
    return {
        "case_id": case["case_id"],
        "key": case["key"],
        "status": status,
        "message": _one_line(message),
        "metrics": metrics or {},
        "result": result,
        "elapsed_s": time.perf_counter() - t0,
    }


def evaluate_case(case: Mapping[str, Any], ctx: EvalContext) -> dict[str, Any]:
    """Size one case with `solve` and return its outcome (never raises).

    Parameters
    ----------
    case : mapping
        ``case_id``, ``key``, ``inputs`` and ``problem`` (raw structure).
    ctx : EvalContext

    Returns
    -------
    dict
        ``case_id``, ``key``, ``status`` (see module doc), ``message``,
        ``metrics`` (flat, SI-suffixed), ``result`` (``SizingResult.to_dict()``
        or None), ``elapsed_s``.
    """
    t0 = time.perf_counter()
    try:
        from ..optimize.api import solve
        from ..problem.load import problem_from_dict

        problem = problem_from_dict(ctx.problem_data(case), source=f"{ctx.source} case {case['case_id']}")
        res = solve(problem, method=ctx.method)
        d = res.to_dict()
        if not res.success:
            return _outcome(case, "infeasible", f"{res.status}: {res.message}", t0, result=d)
        metrics = result_metrics(d, problem, case["inputs"], ctx)
        status, msg = _check(metrics, ctx)
        return _outcome(case, status, msg, t0, metrics, d)
    except ProblemDefinitionError as exc:
        return _outcome(case, "error", "; ".join(exc.faults), t0)
    except Exception as exc:  # a bug or a numerical blow-up: record it, keep going
        tb = traceback.extract_tb(exc.__traceback__)
        where = f" at {tb[-1].filename.rsplit('/', 1)[-1]}:{tb[-1].lineno}" if tb else ""
        return _outcome(case, "error", f"{type(exc).__name__}: {exc}{where}", t0)


def is_batch_eligible(problem) -> bool:
    """True for a minimum-gross-mass, ideal delta-v problem without limits (batch solver)."""
    return (str(problem.solve_for) == "gross_mass" and problem.delta_v_m_s is not None
            and not problem.is_flight_target and not problem.has_constraints
            and problem.method in ("auto", "lagrange")
            and not getattr(problem, "has_stage_models", False))


def _evaluate_batch(cases: Sequence[Mapping[str, Any]], ctx: EvalContext,
                    on_result: Callable[[dict], None]) -> None:
    """Vectorised evaluation of ideal-delta-v cases with `solve_batch`.

    Cases are validated one by one with `problem_from_dict`, grouped by stage
    count, and sized together; results are reported per case in the same
    shape as `evaluate_case` (``result`` holds the stage masses).
    """
    import numpy as np

    from ..optimize.batch import solve_batch
    from ..problem.load import problem_from_dict

    groups: dict[int, list[tuple[Mapping[str, Any], Any, float]]] = {}
    for case in cases:
        t0 = time.perf_counter()
        try:
            problem = problem_from_dict(ctx.problem_data(case), source=f"{ctx.source} case {case['case_id']}")
        except ProblemDefinitionError as exc:
            on_result(_outcome(case, "error", "; ".join(exc.faults), t0))
            continue
        if not is_batch_eligible(problem):
            on_result(evaluate_case(case, ctx))
            continue
        groups.setdefault(len(problem.stages), []).append((case, problem, t0))
    for n, items in groups.items():
        t1 = time.perf_counter()
        c = np.array([[s.exhaust_velocity_m_s for s in p.stages] for _, p, _ in items])
        e = np.array([[s.structural_coefficient for s in p.stages] for _, p, _ in items])
        pl = np.array([p.payload_mass_kg for _, p, _ in items])
        dv = np.array([p.delta_v_m_s for _, p, _ in items])
        br = solve_batch(c, e, pl, dv)
        share = (time.perf_counter() - t1) / len(items)
        for j, (case, problem, t0) in enumerate(items):
            t_case = t0 - share
            if not bool(br.success[j]):
                vmax = float(np.sum(c[j] * np.log(1.0 / e[j])))
                on_result(_outcome(case, "infeasible",
                                   f"infeasible: delta_v {dv[j]:.6g} m/s is at or beyond the most "
                                   f"these stages can deliver ({vmax:.6g} m/s)", t_case))
                continue
            stages = []
            for i, s in enumerate(problem.stages):
                m_ign = float(br.ignition_mass_kg[j, i])
                m_stage = float(br.propellant_mass_kg[j, i] + br.structural_mass_kg[j, i])
                stages.append({
                    "name": s.name,
                    "isp_s": s.isp_s,
                    "exhaust_velocity_m_s": s.exhaust_velocity_m_s,
                    "structural_coefficient": s.structural_coefficient,
                    "ignition_mass_kg": m_ign,
                    "stage_mass_kg": m_stage,
                    "propellant_mass_kg": float(br.propellant_mass_kg[j, i]),
                    "structural_mass_kg": float(br.structural_mass_kg[j, i]),
                    "burnout_mass_kg": m_ign - float(br.propellant_mass_kg[j, i]),
                    "mass_ratio": float(br.mass_ratio[j, i]),
                    "payload_ratio": (m_ign - m_stage) / m_ign,
                    "delta_v_m_s": float(br.delta_v_m_s[j, i]),
                    "delta_v_share": float(br.delta_v_m_s[j, i] / dv[j]) if dv[j] > 0 else 0.0,
                })
            # The same top-level numeric entries as `SizingResult.to_dict()`, so every
            # case of a study has the same metrics whichever solver sized it.
            d = {"status": "optimal", "success": True, "method": "batch",
                 "gross_mass_kg": float(br.gross_mass_kg[j]), "payload_mass_kg": float(pl[j]),
                 "delta_v_m_s": float(dv[j]), "payload_fraction": float(pl[j] / br.gross_mass_kg[j]),
                 "stages": stages}
            metrics = result_metrics(d, problem, case["inputs"], ctx)
            status, msg = _check(metrics, ctx)
            on_result(_outcome(case, status, msg, t_case, metrics, d))


def evaluate_cases(cases: Sequence[Mapping[str, Any]], ctx: EvalContext,
                   on_result: Callable[[dict], None] | None = None,
                   on_start: Callable[[int], None] | None = None) -> list[dict[str, Any]]:
    """Evaluate a chunk of cases, batch-solved where eligible, else one by one.

    Parameters
    ----------
    cases : sequence of mapping
    ctx : EvalContext
    on_result : callable, optional
        Called with each outcome as soon as it is known.
    on_start : callable, optional
        Called with a case_id just before that case is sized one by one
        (the runner uses it to know which case a dying worker was on).

    Returns
    -------
    list of dict
        The outcomes, in completion order.
    """
    out: list[dict[str, Any]] = []

    def emit(o: dict) -> None:
        out.append(o)
        if on_result is not None:
            on_result(o)

    if ctx.solver in ("auto", "batch") and len(cases) > 1:
        if on_start is not None:
            on_start(-1)  # a vectorised chunk: no single case to blame if the worker dies
        _evaluate_batch(cases, ctx, emit)
    else:
        for case in cases:
            if on_start is not None:
                on_start(case["case_id"])
            emit(evaluate_case(case, ctx))
    return out


def finite_or_none(v: float) -> float | None:
    """JSON-safe float: NaN and infinities become None."""
    return v if isinstance(v, float) and math.isfinite(v) else None
