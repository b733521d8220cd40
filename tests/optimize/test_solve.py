"""`solve`: methods agree, limits hold at the returned design, trade factors and duals are right."""

from __future__ import annotations

import math
import warnings
from dataclasses import fields, replace

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sizing import SizingResult, Status, problem_from_dict, solve
from sizing.errors import MSG_TARGET_UNREACHABLE, MSG_UNKNOWN_METHOD
from sizing.physics.staging import max_ideal_delta_v
from tests.strategies import ideal_problems


def _problem(**mission_extra):
    stages = mission_extra.pop("stages", None) or [
        {"name": "first", "isp": 285, "structural_coefficient": 0.075},
        {"name": "second", "isp": 320, "structural_coefficient": 0.095},
        {"name": "kick", "isp": 318, "structural_coefficient": 0.16},
    ]
    mission = {"payload_mass": 180.0, "delta_v": 9300.0}
    mission.update(mission_extra)
    mission = {k: v for k, v in mission.items() if v is not None}
    return problem_from_dict({"mission": mission, "stage": stages})


def test_solve_single_stage_matches_closed_form():
    """One stage: m0 = m_PL n (1 - eps)/(1 - n eps) with n = exp(dv/c) (Tsiolkovsky rocket
    equation; Curtis, Orbital Mechanics for Engineering Students, 3rd ed., eq. 11.63, equation
    number from memory); value computed from the closed form."""
    p = _problem(delta_v=4000.0, stages=[{"name": "only", "exhaust_velocity": 3000.0, "structural_coefficient": 0.1}])
    r = solve(p)
    n = math.exp(4000 / 3000)
    assert r.gross_mass_kg == pytest.approx(180 * n * 0.9 / (1 - 0.1 * n), rel=1e-13)


@pytest.mark.parametrize("solve_for", ["gross_mass", "payload_mass", "delta_v"])
def test_solve_methods_agree_without_limits(solve_for):
    """cvxpy and SLSQP reproduce the Lagrange closed form to 1e-6 relative in every mode
    (consistency check between solvers; scipy.optimize.minimize(method='SLSQP') is a
    general-purpose library, the closed form is checked against Curtis in tests/reference).

    In the two dual modes the objective is flat to first order in the split, so
    the mass ratios are compared at 2e-5 there (the objective still at 1e-6)."""
    kw = {"gross_mass": None}
    if solve_for == "payload_mass":
        kw = {"payload_mass": None, "gross_mass": 20000.0}
    elif solve_for == "delta_v":
        kw = {"delta_v": None, "gross_mass": 20000.0}
    p = _problem(**kw)
    ref = solve(p, method="lagrange")
    for m in ("cvxpy", "slsqp"):
        r = solve(p, method=m)
        assert r.success, r.message
        assert r.gross_mass_kg == pytest.approx(ref.gross_mass_kg, rel=1e-6)
        assert r.payload_mass_kg == pytest.approx(ref.payload_mass_kg, rel=1e-6)
        assert r.delta_v_m_s == pytest.approx(ref.delta_v_m_s, rel=1e-6)
        rel = 1e-6 if solve_for == "gross_mass" else 2e-5
        for a, b in zip(r.stages, ref.stages):
            assert a.mass_ratio == pytest.approx(b.mass_ratio, rel=rel)


def test_solve_dual_modes_are_consistent():
    """Max payload at the min-gross-mass optimum's gross mass returns the same payload (duality;
    consistency check, no external source)."""
    r1 = solve(_problem())
    r2 = solve(_problem(payload_mass=None, gross_mass=r1.gross_mass_kg))
    r3 = solve(_problem(delta_v=None, gross_mass=r1.gross_mass_kg))
    assert r2.payload_mass_kg == pytest.approx(180.0, rel=1e-10)
    assert r3.delta_v_m_s == pytest.approx(9300.0, rel=1e-10)


def test_solve_target_beyond_supremum_reports_maximum():
    """The reported maximum is sum c ln(1/eps), the zero-payload limit of the Tsiolkovsky rocket
    equation per stage (consistency check, no external source)."""
    p = _problem(delta_v=21000.0)
    r = solve(p)
    assert not r.success and r.status == Status.INFEASIBLE
    assert MSG_TARGET_UNREACHABLE in r.message
    c = [s.exhaust_velocity_m_s for s in p.stages]
    e = [s.structural_coefficient for s in p.stages]
    assert r.best["max_delta_v_m_s"] == pytest.approx(max_ideal_delta_v(c, e))
    assert f"{max_ideal_delta_v(c, e):,.6g}" in r.message


def test_solve_weak_stage_is_reported_not_nan():
    """Consistency check, no external source: a stage too weak to help gets n = 1 and a warning,
    never NaN."""
    stages = [{"name": "good", "exhaust_velocity": 3000.0, "structural_coefficient": 0.1},
              {"name": "dud", "exhaust_velocity": 3000.0, "structural_coefficient": 0.9}]
    r = solve(_problem(delta_v=2000.0, stages=stages))
    assert r.success
    dud = r.stage("dud")
    assert dud.mass_ratio == 1.0 and dud.propellant_mass_kg == 0.0 and not dud.contributes
    assert any("dud" in w and "too weak" in w for w in r.warnings)
    assert all(math.isfinite(v) for s in r.stages for v in (s.ignition_mass_kg, s.delta_v_m_s))


def test_solve_unknown_method():
    with pytest.raises(ValueError, match=MSG_UNKNOWN_METHOD + " 'slsq'"):
        solve(_problem(), method="slsq")


@pytest.mark.parametrize("method", ["lagrange", "cvxpy", "slsqp"])
def test_solve_returns_complete_result_every_method(method):
    r = solve(_problem(), method=method)
    assert isinstance(r, SizingResult)
    for f in fields(SizingResult):
        assert hasattr(r, f.name)
    d = r.to_dict()
    for key in ("gross_mass_kg", "payload_mass_kg", "delta_v_m_s", "stages"):
        assert key in d
    for s in d["stages"]:
        for key in ("ignition_mass_kg", "propellant_mass_kg", "structural_mass_kg", "mass_ratio", "delta_v_m_s"):
            assert key in s
    assert r.method == method
    frame = r.to_frame()
    assert list(frame.index) == ["first", "second", "kick"]
    assert "ignition_mass_kg" in frame.columns


def _limited():
    stages = [
        {"name": "first", "isp": 285, "structural_coefficient": 0.075},
        {"name": "second", "isp": 320, "structural_coefficient": 0.095, "max_mass_ratio": 3.2,
         "max_ignition_mass": 1700.0},
        {"name": "kick", "isp": 318, "structural_coefficient": 0.16, "min_delta_v_share": 0.12,
         "max_delta_v_share": 0.22},
    ]
    return _problem(stages=stages, max_gross_mass=24000.0)


@pytest.mark.parametrize("method", ["cvxpy", "slsqp"])
def test_solve_limits_hold_at_returned_design(method):
    """Every limit re-evaluated at the returned design holds (to solver tolerance; consistency
    check, no external source)."""
    r = solve(_limited(), method=method)
    assert r.success, r.message
    for name, v in r.violations.items():
        assert v <= 1e-6, (name, v)
    assert r.stage("second").mass_ratio <= 3.2 * (1 + 1e-6)
    assert r.stage("second").ignition_mass_kg <= 1700.0 * (1 + 1e-6)


def test_solve_cvxpy_and_slsqp_agree_with_limits():
    """Consistency check, no external source: cvxpy and scipy SLSQP agree with limits."""
    a = solve(_limited(), method="cvxpy")
    b = solve(_limited(), method="slsqp")
    assert a.gross_mass_kg == pytest.approx(b.gross_mass_kg, rel=1e-6)


def test_solve_limits_cost_gross_mass():
    """Consistency check, no external source: adding limits never lowers the optimum gross mass."""
    free = solve(_problem())
    lim = solve(_limited())
    assert lim.gross_mass_kg > free.gross_mass_kg


def test_solve_constraint_sensitivities_match_finite_differences():
    """Dual values (sensitivity interpretation of Lagrange multipliers, Boyd & Vandenberghe, Convex
    Optimization, 2004, Sec. 5.6 (section number from memory)) equal the change of the optimum when
    a binding limit is relaxed, by central differences (consistency check)."""
    p = _limited()
    r = solve(p, method="cvxpy")
    binding = {c.name: c for c in r.constraints if c.binding}
    assert {"second.max_mass_ratio", "second.max_ignition_mass"} <= set(binding)

    def gross_with(field, value):
        st = list(p.stages)
        st[1] = replace(st[1], **{field: value})
        return solve(replace(p, stages=tuple(st)), method="cvxpy").gross_mass_kg

    h = 1e-3
    fd = (gross_with("max_mass_ratio", 3.2 + h) - gross_with("max_mass_ratio", 3.2 - h)) / (2 * h)
    assert binding["second.max_mass_ratio"].sensitivity == pytest.approx(fd, rel=2e-3)
    h = 0.5
    fd = (gross_with("max_ignition_mass_kg", 1700 + h) - gross_with("max_ignition_mass_kg", 1700 - h)) / (2 * h)
    assert binding["second.max_ignition_mass"].sensitivity == pytest.approx(fd, rel=2e-3)


def test_solve_contradictory_limits_report_best_reachable():
    """Best reachable delta-v with both mass ratios capped at 2: sum Isp g0 ln 2 (Tsiolkovsky
    rocket equation, g0 = 9.80665 m/s^2, scipy.constants.g); computed by hand."""
    stages = [
        {"name": "a", "isp": 285, "structural_coefficient": 0.075, "max_mass_ratio": 2.0},
        {"name": "b", "isp": 320, "structural_coefficient": 0.095, "max_mass_ratio": 2.0},
    ]
    r = solve(_problem(stages=stages, delta_v=6000.0))
    assert r.status == Status.INFEASIBLE
    best = r.best["max_delta_v_m_s"]
    assert best == pytest.approx((285 + 320) * 9.80665 * math.log(2.0), rel=1e-5)
    assert "cannot be met" in r.message


def test_solve_gross_mass_cap_too_small_is_infeasible():
    """Consistency check, no external source: a gross-mass cap below the optimum is reported
    infeasible."""
    r = solve(_problem(max_gross_mass=5000.0))
    assert r.status == Status.INFEASIBLE
    assert r.best["max_delta_v_m_s"] < 9300.0


def _gross(p):
    return solve(p, method="lagrange").gross_mass_kg


def test_trade_factors_match_finite_differences():
    """Analytic trade factors (envelope theorem on the Lagrangian, Boyd & Vandenberghe, Convex
    Optimization, 2004, Sec. 5.6 (section number from memory)) equal re-solved central differences
    (consistency check, no external numbers)."""
    p = _problem()
    r = solve(p)
    tf = r.trade_factors
    h = 0.01
    fd = (_gross(replace(p, payload_mass_kg=180 + h)) - _gross(replace(p, payload_mass_kg=180 - h))) / (2 * h)
    assert tf["gross_mass_per_payload_kg"] == pytest.approx(fd, rel=1e-6)
    h = 0.1
    fd = (_gross(replace(p, delta_v_m_s=9300 + h)) - _gross(replace(p, delta_v_m_s=9300 - h))) / (2 * h)
    assert tf["gross_mass_per_delta_v_kg_per_m_s"] == pytest.approx(fd, rel=1e-6)
    for i, sd in enumerate(p.stages):
        def stage(**kw):
            st = list(p.stages)
            st[i] = replace(st[i], **kw)
            return replace(p, stages=tuple(st))
        h = 0.01
        fd = (_gross(stage(isp_s=sd.isp_s + h, exhaust_velocity_m_s=(sd.isp_s + h) * p.g0_m_s2))
              - _gross(stage(isp_s=sd.isp_s - h, exhaust_velocity_m_s=(sd.isp_s - h) * p.g0_m_s2))) / (2 * h)
        assert tf["stages"][sd.name]["per_isp_s"] == pytest.approx(fd, rel=1e-5)
        e = sd.structural_coefficient
        h = 1e-5
        fd = (_gross(stage(structural_coefficient=e + h)) - _gross(stage(structural_coefficient=e - h))) / (2 * h)
        assert tf["stages"][sd.name]["per_0_01_structural_coefficient"] == pytest.approx(0.01 * fd, rel=1e-5)


def test_trade_factor_structural_mass_matches_slsqp_with_inert_mass():
    """Adding inert mass to a stage and re-optimising (scipy.optimize.minimize(method='SLSQP') over
    propellant masses, general-purpose library) changes gross mass by the analytic factor
    m0/(mass above the stage)."""
    import numpy as np
    from scipy.optimize import minimize

    p = _problem()
    r = solve(p)
    c = np.array([s.exhaust_velocity_m_s for s in p.stages])
    eps = np.array([s.structural_coefficient for s in p.stages])

    def m0_with_inert(i_stage, delta):
        def masses(mp):
            ms = eps / (1 - eps) * mp
            ms = ms.copy()
            ms[i_stage] += delta
            return ms

        def dv(mp):
            ms = masses(mp)
            above, tot = 180.0, 0.0
            for k in range(len(c) - 1, -1, -1):
                m0 = above + mp[k] + ms[k]
                tot += c[k] * np.log(m0 / (above + ms[k]))
                above = m0
            return tot

        x0 = np.array([s.propellant_mass_kg for s in r.stages])
        res = minimize(lambda mp: 180.0 + np.sum(mp + masses(mp)), x0, method="SLSQP",
                       constraints=[{"type": "eq", "fun": lambda mp: (dv(mp) - 9300.0) / 9300.0}],
                       bounds=[(0, None)] * len(c), options={"ftol": 1e-14, "maxiter": 500})
        assert res.success
        return res.fun

    for i, sd in enumerate(p.stages):
        h = 0.5
        fd = (m0_with_inert(i, h) - m0_with_inert(i, -h)) / (2 * h)
        assert r.trade_factors["stages"][sd.name]["per_structural_kg"] == pytest.approx(fd, rel=1e-4)


@settings(max_examples=40)
@given(problem=ideal_problems(), factor=st.floats(0.1, 10.0))
def test_payload_scaling_is_linear(problem, factor):
    """Property: with no mass-dependent losses, scaling payload scales every stage mass (the
    rocket equation is homogeneous in mass; consistency check, no external source)."""
    a = solve(problem)
    b = solve(replace(problem, payload_mass_kg=problem.payload_mass_kg * factor))
    assert b.gross_mass_kg == pytest.approx(a.gross_mass_kg * factor, rel=1e-9)
    for sa, sb in zip(a.stages, b.stages):
        assert sb.propellant_mass_kg == pytest.approx(sa.propellant_mass_kg * factor, rel=1e-9, abs=1e-9)


@settings(max_examples=40)
@given(problem=ideal_problems())
def test_solve_meets_target_exactly(problem):
    """Property: the returned design's Tsiolkovsky delta-v equals the target (consistency check,
    no external source)."""
    from sizing.physics.rocket import stack_delta_v

    r = solve(problem)
    total, _ = stack_delta_v([s.exhaust_velocity_m_s for s in r.stages],
                             [s.propellant_mass_kg for s in r.stages],
                             [s.structural_mass_kg for s in r.stages], r.payload_mass_kg)
    assert total == pytest.approx(problem.delta_v_m_s, rel=1e-9)


@settings(max_examples=15)
@given(problem=ideal_problems(max_stages=3))
def test_solve_cvxpy_agrees_with_lagrange_property(problem):
    """Property: the convex program reproduces the closed form to 1e-6 (no limits; consistency
    check between solvers, no external source)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        a = solve(problem, method="lagrange")
        b = solve(problem, method="cvxpy")
    assert b.success, b.message
    assert b.gross_mass_kg == pytest.approx(a.gross_mass_kg, rel=1e-6)


def test_trade_factor_structural_mass_with_limits_matches_reoptimisation():
    """With binding limits, the structural-mass factor (m0/A_i)(1 + sum of cap duals) equals a
    scipy SLSQP re-optimisation over propellant masses with inert mass added to the stage and the
    same limits kept (general-purpose library check; envelope theorem, Boyd & Vandenberghe,
    Convex Optimization, 2004, Sec. 5.6, section number from memory)."""
    import numpy as np
    from scipy.optimize import minimize

    p = _limited()
    r = solve(p, method="cvxpy")
    c = np.array([s.exhaust_velocity_m_s for s in p.stages])
    eps = np.array([s.structural_coefficient for s in p.stages])

    def m0_with_inert(i_stage, delta):
        def split(mp):
            ms = eps / (1 - eps) * mp
            ms = ms.copy()
            ms[i_stage] += delta
            above = 180.0
            dvs, ign, ratio = np.zeros(3), np.zeros(3), np.zeros(3)
            for k in (2, 1, 0):
                m0 = above + mp[k] + ms[k]
                ratio[k] = m0 / (above + ms[k])
                dvs[k] = c[k] * np.log(ratio[k])
                ign[k] = m0
                above = m0
            return dvs, ign, ratio

        cons = [
            {"type": "eq", "fun": lambda mp: (split(mp)[0].sum() - 9300.0) / 9300.0},
            {"type": "ineq", "fun": lambda mp: 3.2 - split(mp)[2][1]},
            {"type": "ineq", "fun": lambda mp: (1700.0 - split(mp)[1][1]) / 1700.0},
            {"type": "ineq", "fun": lambda mp: split(mp)[0][2] / 9300.0 - 0.12},
            {"type": "ineq", "fun": lambda mp: 0.22 - split(mp)[0][2] / 9300.0},
        ]
        x0 = np.array([s.propellant_mass_kg for s in r.stages])
        res = minimize(lambda mp: 180.0 + np.sum(mp + eps / (1 - eps) * mp) + delta, x0, method="SLSQP",
                       constraints=cons, bounds=[(0, None)] * 3, options={"ftol": 1e-14, "maxiter": 1000})
        assert res.success, res.message
        return res.fun

    for i, sd in enumerate(p.stages):
        h = 0.5
        fd = (m0_with_inert(i, h) - m0_with_inert(i, -h)) / (2 * h)
        assert r.trade_factors["stages"][sd.name]["per_structural_kg"] == pytest.approx(fd, rel=2e-3), sd.name
