"""`solve`: one entry point for every sizing problem, whatever the method."""

from __future__ import annotations

from ..problem.model import Problem
from ..result import SizingResult
from .prepare import METHODS, prepare

__all__ = ["solve", "METHODS"]


def solve(problem: Problem, *, method: str | None = None) -> SizingResult:
    """Find the optimal mass split of `problem`.

    Parameters
    ----------
    problem : Problem
        From `load_problem` or `problem_from_dict`.
    method : {"auto", "lagrange", "cvxpy", "slsqp"}, optional
        Overrides ``[solver].method`` of the problem.

    Returns
    -------
    SizingResult
        Never raises for a problem without a solution: `success` is False and
        `message` names the best reachable value.

    Raises
    ------
    ValueError
        For an unknown method, or "lagrange" asked for a problem with limits.
    ProblemDefinitionError
        For a problem the chosen method cannot size (`sizing.optimize.prepare`,
        the same checks `sizing check` runs).
    """
    m = prepare(problem, method=method).method
    result = _dispatch(problem, m)
    if problem.design_masses_given:
        from dataclasses import replace

        result = replace(result, warnings=tuple(result.warnings) + (DESIGN_MASSES_NOTE,))
    return result


#: Review note for a file whose stages give their masses: solve re-splits, fly flies them.
DESIGN_MASSES_NOTE = ("the stage masses given in the file are not used by `sizing solve`, which finds the "
                      "optimal split; use `sizing fly` to fly the given masses.")


def _dispatch(problem: Problem, m: str) -> SizingResult:
    if problem.has_stage_models and not problem.is_flight_target:
        from ._stage_nlp import MSG_MODEL_METHOD, solve_stage_models, with_stage_hardware

        if any(s.has_mass_model for s in problem.stages):
            if m in ("lagrange", "cvxpy"):
                raise ValueError(f"method {m!r} {MSG_MODEL_METHOD} 'slsqp' (or 'auto').")
            return solve_stage_models(problem)
        return with_stage_hardware(problem, _dispatch_fixed(problem, m))
    return _dispatch_fixed(problem, m)


def _dispatch_fixed(problem: Problem, m: str) -> SizingResult:
    if problem.is_flight_target:
        from .flight_problem import solve_flight_problem

        return solve_flight_problem(problem, method=m)
    if m == "lagrange":
        from ._lagrange import solve_lagrange

        return solve_lagrange(problem)
    if m == "cvxpy":
        from ._cvx import solve_cvxpy

        return solve_cvxpy(problem)
    from ._slsqp import solve_slsqp

    return solve_slsqp(problem)
