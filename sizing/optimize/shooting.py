"""Direct shooting on the compiled flight: the NLP engine behind the steering and sizing optimisers.

A design vector z (scaled variables) is turned into a flight by the caller's
`fly(z, base)`, which returns a vector of outputs (the objective first, then
the constraint functions) and a token. The Jacobian of all outputs is taken by
forward differences, one flight per variable; each perturbed flight gets the
base flight's token, so that it can replay the base flight's integration steps
(`sizing.physics.flight.setup.replay_steps`: internal numerical
differentiation), which makes the differences derivatives of one fixed
discretisation instead of differences of adaptive noise. The nonlinear
program is solved by
sequential quadratic programming (scipy.optimize.minimize, method "SLSQP";
D. Kraft, "A software package for sequential quadratic programming",
DFVLR-FB 88-28, 1988). This is direct single shooting with a parametrised
control (J. T. Betts, Practical Methods for Optimal Control and Estimation
Using Nonlinear Programming, 2nd ed., SIAM, 2010, Sec. 3.5 and 4.2; section
numbers from memory).

Why shooting and not collocation: the flight has one set of equations, in the
compiled kernel, with events, kinks, staging and the loss budget. Shooting
through that kernel means the optimiser's answer is the answer `sizing fly`
reproduces (the same code, the same steps), and a flight costs a fraction of
a millisecond, so a forward-difference Jacobian over 10-20 variables is cheap.
Without replay the kernel's adaptive steps make the outputs piecewise smooth
with jumps of the order of the integration tolerance.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

__all__ = ["FD_STEP", "ShootingResult", "find_feasible", "solve_shooting"]

#: Forward-difference step in scaled variables (variables are scaled to O(1)).
FD_STEP = 1e-5


@dataclass(frozen=True, slots=True)
class ShootingResult:
    """Outcome of `solve_shooting`.

    Attributes
    ----------
    z : numpy.ndarray
        Best design found (scaled variables).
    outputs : numpy.ndarray
        Outputs of `fly(z)` (objective, then constraints).
    success : bool
        SLSQP converged and the constraints hold within their tolerances.
    message : str
    n_flights : int
        Flights flown (objective, constraints and Jacobians).
    n_iterations : int
        SQP iterations.
    max_violation : float
        Largest constraint violation (scaled units).
    multipliers : numpy.ndarray
        Lagrange multipliers of the equality and inequality outputs at z (0 for
        inactive inequalities): least-squares solution of grad f + J^T lambda = 0
        over the active constraints, from the forward-difference Jacobian.
    """

    z: np.ndarray
    outputs: np.ndarray
    success: bool
    message: str
    n_flights: int
    n_iterations: int
    max_violation: float
    multipliers: np.ndarray = field(default_factory=lambda: np.zeros(0))

    def objective_change(self, outputs_perturbed: np.ndarray) -> float:
        """First-order change of the optimal objective when a parameter moves the outputs at z (envelope theorem).

        d f* = d f + lambda . d c (Fiacco, Introduction to Sensitivity and Stability
        Analysis in Nonlinear Programming, 1983, Ch. 3; Bertsekas, Nonlinear
        Programming, 3rd ed., 2016, Sec. 3.2; from memory): the change of the
        objective and of the constraint outputs at the optimal design, weighted by
        the multipliers.
        """
        d = np.asarray(outputs_perturbed, float) - self.outputs
        return float(d[0] + self.multipliers @ d[1:1 + self.multipliers.size])


class _Evaluator:
    """Memoised outputs and forward-difference Jacobians of fly(z)."""

    def __init__(self, fly: Callable, step: float):
        self.fly = fly
        self.step = step
        self.n_flights = 0
        self._g: dict[bytes, tuple[np.ndarray, object]] = {}
        self._j: dict[bytes, np.ndarray] = {}

    def _base(self, z: np.ndarray) -> tuple[np.ndarray, object]:
        key = np.asarray(z, float).tobytes()
        if key not in self._g:
            self.n_flights += 1
            g, token = self.fly(np.array(z, float), None)
            self._g[key] = (np.asarray(g, float), token)
        return self._g[key]

    def g(self, z: np.ndarray) -> np.ndarray:
        return self._base(z)[0]

    def jac(self, z: np.ndarray, lower: np.ndarray, upper: np.ndarray, cols=None) -> np.ndarray:
        """Forward-difference Jacobian of every output; with `cols`, of those variables only (others 0)."""
        z = np.array(z, float)
        cols = range(z.size) if cols is None else cols
        key = z.tobytes() + np.asarray(cols, np.int64).tobytes()
        if key not in self._j:
            g_base, token = self._base(z)
            g0 = g_base if token is None else np.asarray(self.fly(z, token)[0], float)  # replayed base
            if token is not None:
                self.n_flights += 1
            J = np.zeros((g0.size, z.size))
            for i in cols:
                h = self.step if z[i] + self.step <= upper[i] else -self.step
                zi = z.copy()
                zi[i] += h
                self.n_flights += 1
                J[:, i] = (np.asarray(self.fly(zi, token)[0], float) - g0) / h
            self._j[key] = J
        return self._j[key]


class _Stalled(Exception):
    """Raised from the SQP callback when the feasible objective has stopped improving."""


def find_feasible(fly: Callable, z0, lower, upper, *, n_eq: int, max_evaluations: int = 60,
                  step: float = FD_STEP, free=None) -> tuple[np.ndarray, int]:
    """A point where the equality outputs vanish: bounded least squares (trust-region reflective,
    scipy.optimize.least_squares) on outputs[1:1+n_eq], with the replayed-step Jacobian.

    `free` (indices into z, optional) restricts the search to those variables; the others stay at z0.
    Returns (z, flights flown).
    """
    from scipy.optimize import least_squares

    lower = np.asarray(lower, float)
    upper = np.asarray(upper, float)
    z_full = np.clip(np.asarray(z0, float), lower, upper)
    idx = np.arange(z_full.size) if free is None else np.asarray(free, int)
    ev = _Evaluator(fly, step)
    eq = slice(1, 1 + n_eq)

    def full(x: np.ndarray) -> np.ndarray:
        z = z_full.copy()
        z[idx] = x
        return z

    r = least_squares(lambda x: ev.g(full(x))[eq], z_full[idx],
                      jac=lambda x: ev.jac(full(x), lower, upper, idx)[eq][:, idx], bounds=(lower[idx], upper[idx]),
                      method="trf", xtol=1e-12, ftol=1e-12, gtol=1e-14, max_nfev=max_evaluations)
    return np.clip(full(r.x), lower, upper), ev.n_flights


def solve_shooting(fly: Callable, z0, lower, upper, *, n_eq: int, n_ineq: int = 0,
                   linear_ineq: tuple[np.ndarray, np.ndarray] | None = None, eq_tol: float = 1e-3,
                   max_iterations: int = 60, ftol: float = 1e-9, step: float = FD_STEP,
                   stall_iterations: int = 5, stall_tol: float = 2e-6) -> ShootingResult:
    """Minimise outputs[0] subject to outputs[1:1+n_eq] = 0 and outputs[1+n_eq:] >= 0.

    Parameters
    ----------
    fly : callable
        (z, token) -> (outputs, token): outputs are the objective, n_eq equality
        residuals and n_ineq inequality margins; the returned token (or None)
        is handed back with the perturbed designs of the Jacobian.
    z0, lower, upper : array_like
        Start and bounds (scaled variables).
    n_eq, n_ineq : int
        Numbers of equality and inequality outputs.
    linear_ineq : (A, b), optional
        Extra linear inequalities A z + b >= 0 (no flight needed).
    eq_tol : float
        Largest accepted constraint violation (scaled) for success.
    max_iterations : int
        SQP iterations.
    ftol : float
        SLSQP's accuracy on the objective.
    step : float
        Forward-difference step (scaled variables).
    stall_iterations, stall_tol : int, float
        Stop once the best feasible objective has improved by less than
        `stall_tol` over that many feasible iterates (the adaptive flights
        leave a little noise that keeps SLSQP from its own stop).
    """
    from scipy.optimize import minimize

    lower = np.asarray(lower, float)
    upper = np.asarray(upper, float)
    z0 = np.clip(np.asarray(z0, float), lower, upper)
    ev = _Evaluator(fly, step)
    eq = slice(1, 1 + n_eq)
    ineq = slice(1 + n_eq, 1 + n_eq + n_ineq)

    def violation(z: np.ndarray, g: np.ndarray) -> float:
        v = float(np.max(np.abs(g[eq]))) if n_eq else 0.0
        if n_ineq:
            v = max(v, float(np.max(np.maximum(0.0, -g[ineq]))))
        if linear_ineq is not None:
            v = max(v, float(np.max(np.maximum(0.0, -(linear_ineq[0] @ z + linear_ineq[1])))))
        return v

    best = {"z": z0, "f": math.inf, "trail": []}
    n_it = [0]

    def callback(zk):
        n_it[0] += 1
        g = ev.g(zk)
        if violation(zk, g) <= eq_tol and math.isfinite(g[0]):
            if g[0] < best["f"]:
                best["z"], best["f"] = np.array(zk), float(g[0])
            trail = best["trail"]
            trail.append(best["f"])
            if len(trail) > stall_iterations and trail[-stall_iterations - 1] - trail[-1] < stall_tol * abs(trail[-1]):
                raise _Stalled

    cons = [{"type": "eq", "fun": lambda z: ev.g(z)[eq], "jac": lambda z: ev.jac(z, lower, upper)[eq]}]
    if n_ineq:
        cons.append({"type": "ineq", "fun": lambda z: ev.g(z)[ineq], "jac": lambda z: ev.jac(z, lower, upper)[ineq]})
    if linear_ineq is not None:
        A, b = linear_ineq
        cons.append({"type": "ineq", "fun": lambda z: A @ z + b, "jac": lambda z: A})
    message = "stalled: the feasible objective stopped improving"
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            res = minimize(lambda z: ev.g(z)[0], z0, jac=lambda z: ev.jac(z, lower, upper)[0], method="SLSQP",
                           bounds=list(zip(lower, upper)), constraints=cons, callback=callback,
                           options={"maxiter": max_iterations, "ftol": ftol})
        message = str(res.message)
        z_end = np.clip(res.x, lower, upper)
        g_end = ev.g(z_end)
        if violation(z_end, g_end) <= eq_tol and g_end[0] <= best["f"]:
            best["z"], best["f"] = z_end, float(g_end[0])
        converged = bool(res.success)
    except _Stalled:
        converged = True
    z = best["z"] if math.isfinite(best["f"]) else np.clip(z0, lower, upper)
    g = ev.g(z)
    viol = violation(z, g)
    lam = _multipliers(ev.jac(z, lower, upper), g, n_eq, n_ineq, z, lower, upper)
    ok = converged and viol <= eq_tol and math.isfinite(g[0])
    if not converged and viol <= eq_tol:
        message += " (best feasible iterate kept)"
    return ShootingResult(z=z, outputs=g, success=ok or (viol <= eq_tol and math.isfinite(best["f"])),
                          message=message, n_flights=ev.n_flights, n_iterations=n_it[0], max_violation=viol,
                          multipliers=lam)


def _multipliers(J: np.ndarray, g: np.ndarray, n_eq: int, n_ineq: int, z, lower, upper) -> np.ndarray:
    """KKT multipliers: grad f + sum lambda_i grad c_i = 0 on the free variables, active constraints only."""
    free = (z > lower + 1e-9) & (z < upper - 1e-9)
    rows = list(range(1, 1 + n_eq)) + [1 + n_eq + k for k in range(n_ineq) if g[1 + n_eq + k] < 1e-6]
    lam = np.zeros(n_eq + n_ineq)
    if not rows or not free.any():
        return lam
    A = J[rows][:, free].T
    sol, *_ = np.linalg.lstsq(A, -J[0, free], rcond=None)
    lam[[r - 1 for r in rows]] = sol
    return lam
