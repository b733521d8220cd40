"""Benchmark: optimal staging solvers side by side with a plain scipy SLSQP formulation.

Solves the same random 3-stage minimum-gross-mass problems with
  * a plain scipy.optimize.minimize(method="SLSQP") formulation (the baseline), as a
    textbook states the problem: variables are the stage mass ratios n_i, the objective is
    ln(m0/m_PL) = sum ln(n_i (1 - eps_i) / (1 - n_i eps_i)), the constraint is the rocket
    equation sum c_i ln n_i = delta-v, bounds 1 <= n_i < 1/eps_i, gradients by finite
    differences (Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Sec. 11.6:
    the same objective and constraint the Lagrange method solves in closed form),
  * a tuned SLSQP formulation (log mass ratios, analytic gradients), for reference,
  * the single-problem Lagrange path (sizing.physics.staging.optimal_mass_ratios),
  * the full public API solve() (problem object in, SizingResult with trade factors out),
  * the vectorised batch solver (sizing.solve_batch),
  * the cvxpy convex program (constrained path),
and prints problems per second, the speed-up over SLSQP and the largest relative
disagreement in gross mass, all measured in this one run.

Run:  python benchmarks/bench_staging.py [--n-slsqp 300] [--n-batch 1000000]
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def _random_problems(rng, m):
    c = rng.uniform(2200.0, 4400.0, (m, 3))
    e = rng.uniform(0.05, 0.2, (m, 3))
    dv = rng.uniform(0.3, 0.75, m) * np.sum(c * np.log(1 / e), axis=1)
    pl = rng.uniform(1.0, 1000.0, m)
    return c, e, pl, dv


def _gross(logn, e, pl):
    n = np.exp(logn)
    return pl * np.prod(n * (1 - e) / (1 - n * e))


def _plain_slsqp(c, e, dv):
    """The textbook formulation: minimise ln(m0/m_PL) over the stage mass ratios (SLSQP,
    finite-difference gradients); start from an equal delta-v split kept inside the bounds.

    Returns the scipy result; ``fun`` is ln(m0/m_PL).
    """
    from scipy.optimize import minimize

    def log_growth(n):
        return np.sum(np.log(n * (1 - e) / (1 - n * e)))

    hi = (1 / e) * (1 - 1e-9)
    n0 = np.minimum(np.exp(dv / (c.size * c)), 0.5 * (1 + 1 / e))
    return minimize(log_growth, n0, method="SLSQP", bounds=list(zip(np.ones(c.size), hi)),
                    constraints=[{"type": "eq", "fun": lambda n: np.sum(c * np.log(n)) / dv - 1.0}],
                    options={"ftol": 1e-12, "maxiter": 500})


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n-slsqp", type=int, default=200)
    ap.add_argument("--n-cvxpy", type=int, default=30)
    ap.add_argument("--n-batch", type=int, default=1_000_000)
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args()

    from sizing import problem_from_dict, solve, solve_batch
    from sizing.optimize._slsqp import slsqp_min_gross_log_growth
    from sizing.physics.staging import optimal_mass_ratios

    rng = np.random.default_rng(args.seed)
    c, e, pl, dv = _random_problems(rng, args.n_slsqp)
    m = args.n_slsqp

    # baseline: plain SLSQP over the delta-v split
    t0 = time.perf_counter()
    g_slsqp = np.empty(m)
    ok_slsqp = np.zeros(m, dtype=bool)
    for k in range(m):
        r = _plain_slsqp(c[k], e[k], dv[k])
        g_slsqp[k] = pl[k] * np.exp(r.fun)
        ok_slsqp[k] = r.success
    t_slsqp = (time.perf_counter() - t0) / m

    # tuned SLSQP over log mass ratios with analytic gradients
    t0 = time.perf_counter()
    g_tuned = np.empty(m)
    ok_tuned = np.zeros(m, dtype=bool)
    for k in range(m):
        r = slsqp_min_gross_log_growth(c[k], e[k], dv[k])
        g_tuned[k] = _gross(r.x, e[k], pl[k])
        ok_tuned[k] = r.success
    t_tuned = (time.perf_counter() - t0) / m

    # single-problem Lagrange path
    t0 = time.perf_counter()
    g_lag = np.empty(m)
    for k in range(m):
        sol = optimal_mass_ratios(c[k], e[k], dv[k])
        g_lag[k] = pl[k] * np.exp(sol.log_growth)
    t_lag = (time.perf_counter() - t0) / m

    # full public API (validation + result object + analytic trade factors)
    problems = [problem_from_dict({"mission": {"payload_mass": float(pl[k]), "delta_v": float(dv[k])},
                                   "stage": [{"name": f"s{i}", "exhaust_velocity": float(c[k, i]),
                                              "structural_coefficient": float(e[k, i])} for i in range(3)]})
                for k in range(m)]
    t0 = time.perf_counter()
    g_api = np.array([solve(p).gross_mass_kg for p in problems])
    t_api = (time.perf_counter() - t0) / m

    # cvxpy path on a subset
    mc = min(args.n_cvxpy, m)
    solve(problems[0], method="cvxpy")  # import and warm-up
    t0 = time.perf_counter()
    from sizing.optimize._cvx import _build, _run
    g_cvx = np.empty(mc)
    for k in range(mc):
        prob, x, _y, _n = _build(problems[k], problems[k].solve_for)
        _run(prob, problems[k])
        g_cvx[k] = _gross(np.maximum(x.value, 0), e[k], pl[k])
    t_cvx = (time.perf_counter() - t0) / mc

    # batch: the same problems (for agreement) and a large random set (for throughput)
    b = solve_batch(c, e, pl, dv)
    cb, eb, plb, dvb = _random_problems(np.random.default_rng(args.seed + 1), args.n_batch)
    solve_batch(cb[:1000], eb[:1000], plb[:1000], dvb[:1000])
    t0 = time.perf_counter()
    bb = solve_batch(cb, eb, plb, dvb)
    t_batch = (time.perf_counter() - t0) / args.n_batch
    assert bb.success.all()

    def dis(a, ref, ok=None):
        d = np.abs(a / ref - 1.0)
        return float(np.max(d if ok is None else d[ok]))

    print(f"random 3-stage problems: {m} (SLSQP, Lagrange, API), {mc} (cvxpy), {args.n_batch:,} (batch)")
    print(f"SLSQP reported failure on {m - ok_slsqp.sum()} (plain) and {m - ok_tuned.sum()} (tuned) of {m}; "
          "their disagreement is taken over the problems they solved")
    print(f"{'path':<40}{'problems/s':>12}{'x SLSQP':>10}{'max rel. diff vs Lagrange':>28}")
    rows = [
        ("plain SLSQP, mass ratios (baseline)", t_slsqp, dis(g_slsqp, g_lag, ok_slsqp)),
        ("tuned SLSQP (log ratios, gradients)", t_tuned, dis(g_tuned, g_lag, ok_tuned)),
        ("Lagrange, single problem", t_lag, 0.0),
        ("solve() public API (lagrange)", t_api, dis(g_api, g_lag)),
        ("cvxpy convex program", t_cvx, dis(g_cvx, g_lag[:mc])),
        ("solve_batch (vectorised)", t_batch, dis(b.gross_mass_kg, g_lag)),
    ]
    for name, t, d in rows:
        print(f"{name:<40}{1.0 / t:>12,.0f}{t_slsqp / t:>10,.1f}{d:>28.2e}")
    print(f"targets: batch >= 3000x plain SLSQP: {t_slsqp / t_batch:,.0f}x "
          f"({t_tuned / t_batch:,.0f}x the tuned one); single >= 100x: {t_slsqp / t_lag:,.0f}x "
          f"({t_tuned / t_lag:,.0f}x the tuned one)")
    print(f"agreement target 1e-9: Lagrange vs plain SLSQP {dis(g_slsqp, g_lag, ok_slsqp):.1e}, vs tuned "
          f"SLSQP {dis(g_tuned, g_lag, ok_tuned):.1e}, batch vs Lagrange {dis(b.gross_mass_kg, g_lag):.1e}; "
          f"cvxpy target 1e-6: {dis(g_cvx, g_lag[:mc]):.1e}")


if __name__ == "__main__":
    main()
