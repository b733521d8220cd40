"""The one place a problem is checked for sizing: `solve` and `sizing check` both call it.

Loading (`sizing.problem.load`) checks each key on its own; some faults show
only when the problem is put together for a method: limits with an apogee or
orbit target, a flight target without thrust-to-weight or a first-stage
diameter, an inclination the launch site cannot reach, the Lagrange method
asked for a problem with limits. `prepare` runs every such check before any
numerics, so a file that `sizing check` accepts is one `sizing solve` accepts.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import MSG_UNKNOWN_METHOD, ProblemDefinitionError
from ..problem.model import Problem

__all__ = ["Prepared", "prepare", "METHODS", "MSG_LAGRANGE_LIMITS", "MSG_METHOD_NOT_FOR_FLIGHT"]

#: Methods `solve` accepts. "auto" takes the Lagrange closed form when no limit
#: is set and the convex program otherwise.
METHODS = ("auto", "lagrange", "cvxpy", "slsqp")

#: Error text: the ideal-delta-v methods do not size flight targets.
MSG_METHOD_NOT_FOR_FLIGHT = ("methods 'lagrange', 'cvxpy' and 'slsqp' size ideal delta-v targets; an apogee or orbit "
                             "target is sized by the integrated flight optimiser: use method 'auto' (or leave "
                             "[solver] method out).")
MSG_LAGRANGE_LIMITS = ("method 'lagrange' handles no limits (mass ratio, delta-v share, mass caps); "
                       "use 'cvxpy' or 'auto'.")


@dataclass(frozen=True, slots=True)
class Prepared:
    """A problem that passed every check, with the method that will size it.

    Attributes
    ----------
    problem : Problem
    method : str
        The method asked for ('auto' resolved for delta-v problems; flight
        targets keep what was asked, the flight layer chooses).
    """

    problem: Problem
    method: str


def prepare(problem: Problem, *, method: str | None = None) -> Prepared:
    """Check a loaded problem for sizing with a method, before any numerics.

    Parameters
    ----------
    problem : Problem
    method : str, optional
        Overrides ``[solver].method``.

    Returns
    -------
    Prepared

    Raises
    ------
    ValueError
        An unknown method, or 'lagrange' for a problem with limits.
    ProblemDefinitionError
        A flight-target problem the flight layer cannot size (see
        `sizing.optimize.flight_problem.check_flight_problem`).
    """
    m = method or problem.method or "auto"

    def refuse(text: str):
        # the flag or the file key that asked for the method, then what is allowed
        if method:
            raise ValueError(f"--method: {text}")
        raise ProblemDefinitionError(problem.source, [f"solver.method: {text}"])

    if m not in METHODS:
        refuse(f"{MSG_UNKNOWN_METHOD} {m!r}. Choose one of: {', '.join(repr(x) for x in METHODS)}.")
    if problem.is_flight_target:
        from .flight_problem import check_flight_problem

        if m != "auto":
            refuse(f"{MSG_METHOD_NOT_FOR_FLIGHT} Got method {m!r}.")
        check_flight_problem(problem)
        return Prepared(problem, m)
    model = problem.has_stage_models and any(s.has_mass_model for s in problem.stages)
    if model:
        if m in ("lagrange", "cvxpy"):
            from ._stage_nlp import MSG_MODEL_METHOD

            refuse(f"method {m!r} {MSG_MODEL_METHOD} 'slsqp' (or 'auto').")
        return Prepared(problem, "slsqp")
    if m == "auto":
        m = "cvxpy" if problem.has_constraints else "lagrange"
    if m == "lagrange" and problem.has_constraints:
        refuse(MSG_LAGRANGE_LIMITS)
    return Prepared(problem, m)
