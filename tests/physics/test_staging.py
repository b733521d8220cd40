"""Optimal staging (Lagrange multiplier method) against published worked examples."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from sizing.physics.rocket import ideal_delta_v, mass_ratio, stack_delta_v, stack_masses
from sizing.physics.staging import (
    identical_stages_delta_v,
    identical_stages_payload_fraction,
    infinite_stages_delta_v,
    max_ideal_delta_v,
    optimal_mass_ratios,
    optimal_mass_ratios_batch,
    optimal_mass_ratios_for_growth,
)
from tests.strategies import stage_sets

# Curtis uses g0 = 9.81 m/s^2 (0.00981 km/s^2 in Example 11.4 as quoted on holooly.com)
G0_CURTIS = 9.81


def test_tsiolkovsky_worked_values():
    """Tsiolkovsky rocket equation delta_v = Isp g0 ln(m0/mf) (Sutton & Biblarz, Rocket Propulsion
    Elements, 9th ed., ch. 4; Curtis, Orbital Mechanics for Engineering Students, 3rd ed., ch. 11;
    equation numbers from memory), g0 = 9.80665 m/s^2 (scipy.constants.g); values computed from
    the closed form. (Tabulated in the project's shared check values, sec. 4.)"""
    assert ideal_delta_v(300 * 9.80665, math.e) == pytest.approx(2941.995, abs=1e-3)
    assert ideal_delta_v(300 * 9.80665, 10.0) == pytest.approx(6774.19, abs=1e-2)
    assert ideal_delta_v(450 * 9.80665, 5.0) == pytest.approx(7102.44, abs=1e-2)
    assert mass_ratio(ideal_delta_v(3000.0, 7.5), 3000.0) == pytest.approx(7.5, rel=1e-14)


def test_optimal_mass_ratios_curtis_three_stage_example():
    """Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Sec. 11.6, Example 11.6
    (example number from memory): eta = 0.4668 s/km, n = 4.541, 2.507, 1.361,
    stage masses 165 700, 18 070, 2 477 kg; printed to 4 s.f."""
    c = [400 * G0_CURTIS, 350 * G0_CURTIS, 300 * G0_CURTIS]
    eps = [0.10, 0.15, 0.20]
    sol = optimal_mass_ratios(c, eps, 10_000.0)
    assert sol.eta_s_m * 1000 == pytest.approx(0.4668, abs=5e-5)
    assert sol.mass_ratios == pytest.approx([4.541, 2.507, 1.361], abs=6e-4)
    m = stack_masses(sol.mass_ratios, eps, 5000.0)
    assert m["stage_mass_kg"] == pytest.approx([165_700, 18_070, 2_477], rel=5e-4)
    assert float(m["gross_mass_kg"]) == pytest.approx(191_200, rel=5e-4)
    assert sol.delta_v_m_s == pytest.approx(10_000.0, rel=1e-12)


def test_optimal_mass_ratios_match_scipy_slsqp_formulation():
    """The Lagrange optimum equals a brute-force minimisation of total mass with
    scipy.optimize.minimize(method='SLSQP') (general-purpose library check) on the inputs of
    Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Example 11.6 (example number from
    memory). (Agreement to 1e-9 recorded in the project's shared check values, sec. 1.1.)"""
    from sizing.optimize._slsqp import slsqp_min_gross_log_growth

    c = [400 * G0_CURTIS, 350 * G0_CURTIS, 300 * G0_CURTIS]
    eps = [0.10, 0.15, 0.20]
    sol = optimal_mass_ratios(c, eps, 10_000.0)
    ref = slsqp_min_gross_log_growth(c, eps, 10_000.0)
    assert ref.success
    assert np.exp(ref.x) == pytest.approx(sol.mass_ratios, rel=1e-6)
    assert ref.fun == pytest.approx(sol.log_growth, rel=1e-10)


@pytest.mark.parametrize("n_stages, expected", [
    (1, 4452.82), (2, 6366.87), (3, 7038.52), (4, 7353.64), (5, 7533.03), (10, 7866.35)])
def test_identical_stages_delta_v_niemeyer(n_stages, expected):
    """K. Niemeyer, Rocket Propulsion (open textbook, Oregon State University), page "Rocket staging",
    worked example: eps = 0.2, c = 3000 m/s, m0/m_PL = 30 (inputs found in the book, which plots
    the result); values computed from the book's formula. (Tabulated in the project's shared
    check values, sec. 1.3.)"""
    assert identical_stages_delta_v(n_stages, 3000.0, 0.2, 1 / 30) == pytest.approx(expected, abs=0.01)


@pytest.mark.parametrize("n_stages", [1, 2, 3, 4, 5, 10])
def test_optimal_mass_ratios_identical_stages_match_closed_form(n_stages):
    """With identical stages the Lagrange optimum splits delta-v equally and the payload
    fraction equals the closed form [(e^{-v/Nc} - eps)/(1 - eps)]^N (K. Niemeyer, Rocket
    Propulsion, open textbook, Oregon State University, page "Rocket staging")."""
    v = identical_stages_delta_v(n_stages, 3000.0, 0.2, 1 / 30)
    sol = optimal_mass_ratios([3000.0] * n_stages, [0.2] * n_stages, v)
    assert max(sol.mass_ratios) == pytest.approx(min(sol.mass_ratios), rel=1e-10)
    assert math.exp(-sol.log_growth) == pytest.approx(1 / 30, rel=1e-9)


@pytest.mark.parametrize("n_stages, expected", [(2, 0.018717), (3, 0.026369), (4, 0.029303)])
def test_identical_stages_payload_fraction_inverse_closed_form(n_stages, expected):
    """Identical-stage closed form, K. Niemeyer, Rocket Propulsion (open textbook, Oregon State
    University), page "Rocket staging"; v = 9000 m/s, c = 3000 m/s, eps = 0.1; values computed
    from the book's formula. (Tabulated in the project's shared check values, sec. 1.3.)"""
    assert identical_stages_payload_fraction(n_stages, 3000.0, 0.1, 9000.0) == pytest.approx(expected, abs=2e-6)
    sol = optimal_mass_ratios([3000.0] * n_stages, [0.1] * n_stages, 9000.0)
    assert math.exp(-sol.log_growth) == pytest.approx(expected, abs=2e-6)


def test_optimal_mass_ratios_single_stage_unreachable_raises():
    """N = 1, v = 9000 m/s, c = 3000 m/s, eps = 0.1: e^-3 = 0.0498 < eps, unreachable
    (single-stage limit of the closed form in K. Niemeyer, Rocket Propulsion, open textbook,
    Oregon State University, page "Rocket staging"; computed. Tabulated in the project's
    shared check values, sec. 1.3.)"""
    assert max_ideal_delta_v([3000.0], [0.1]) < 9000.0
    with pytest.raises(ValueError, match="supremum"):
        optimal_mass_ratios([3000.0], [0.1], 9000.0)


def test_infinite_stages_bound_is_never_exceeded():
    """K. Niemeyer, Rocket Propulsion (open textbook, Oregon State University), page "Rocket staging":
    v_inf = c (1 - eps) ln(1/pi) = 8162.87 m/s (computed from the book's formula) for the
    eps = 0.2, c = 3000, m0/m_PL = 30 case; every finite N stays below it."""
    v_inf = infinite_stages_delta_v(3000.0, 0.2, 1 / 30)
    assert v_inf == pytest.approx(8162.87, abs=0.01)
    for n in range(1, 40):
        assert identical_stages_delta_v(n, 3000.0, 0.2, 1 / 30) < v_inf


def test_optimal_mass_ratios_for_growth_restricted_two_stage_curtis():
    """Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Example 11.4 (b) (inputs as
    quoted on holooly.com "Question 11.4"): m0 = 200 000 kg, m_PL = 10 000 kg, eps = 0.15,
    Isp 350 s, g0 = 9.81 -> v_bo = 7406.86 m/s computed from published inputs; the book's
    printed 7.41 km/s is from memory. (Tabulated in the project's shared check values, sec. 1.2.)"""
    c = 350 * G0_CURTIS
    sol = optimal_mass_ratios_for_growth([c, c], [0.15, 0.15], math.log(20.0))
    assert sol.delta_v_m_s == pytest.approx(7406.86, abs=0.01)
    assert sol.mass_ratios == pytest.approx([2.940608, 2.940608], rel=1e-6)


def test_optimal_mass_ratios_weak_stage_gets_ratio_one():
    """A stage with c(1 - eps) below the multiplier's u gets n = 1 (KKT bound), not NaN.
    Consistency check, no external source."""
    sol = optimal_mass_ratios([3000.0, 3000.0], [0.1, 0.9], 2000.0)
    assert sol.mass_ratios[1] == 1.0
    assert all(math.isfinite(n) for n in sol.mass_ratios)
    assert 3000.0 * math.log(sol.mass_ratios[0]) == pytest.approx(2000.0, rel=1e-12)


@given(stages=stage_sets(1, 4), frac=st.floats(0.01, 0.95))
def test_optimal_mass_ratios_meet_target_exactly(stages, frac):
    """Property: the optimum meets the delta-v target to 1e-10 and stays inside 1 <= n < 1/eps
    (consistency check, no external source)."""
    c, eps = stages
    dv = frac * max_ideal_delta_v(c, eps)
    sol = optimal_mass_ratios(c, eps, dv)
    assert sum(ci * math.log(n) for ci, n in zip(c, sol.mass_ratios)) == pytest.approx(dv, rel=1e-10)
    for n, e in zip(sol.mass_ratios, eps):
        assert 1.0 <= n < 1.0 / e


@given(stages=stage_sets(2, 4), frac=st.floats(0.05, 0.9), i=st.integers(0, 3), j=st.integers(0, 3),
       step=st.floats(1.0, 200.0))
def test_optimal_mass_ratios_perturbation_costs_mass(stages, frac, i, j, step):
    """Property: moving delta-v from one stage to another (target kept) never lowers gross mass
    (optimality of the Lagrange solution; consistency check, no external source)."""
    c, eps = stages
    n_st = len(c)
    i, j = i % n_st, j % n_st
    if i == j:
        return
    dv = frac * max_ideal_delta_v(c, eps)
    sol = optimal_mass_ratios(c, eps, dv)
    dvs = [ci * math.log(n) for ci, n in zip(c, sol.mass_ratios)]
    step = min(step, dvs[i])
    if step <= 0:
        return
    dvs[i] -= step
    dvs[j] += step
    n_new = [math.exp(d / ci) for d, ci in zip(dvs, c)]
    if any(n >= 1 / e for n, e in zip(n_new, eps)):
        return
    g_new = sum(math.log(n * (1 - e) / (1 - n * e)) for n, e in zip(n_new, eps))
    assert g_new >= sol.log_growth - 1e-12 * max(1.0, abs(sol.log_growth))


def test_optimal_mass_ratios_batch_matches_scalar():
    """The vectorised root-finder returns the scalar solution for every row, and NaN where unreachable.
    Consistency check, no external source."""
    rng = np.random.default_rng(7)
    m = 500
    c = rng.uniform(1800, 4400, (m, 3))
    e = rng.uniform(0.05, 0.3, (m, 3))
    dv = rng.uniform(0.1, 1.1, m) * np.sum(c * np.log(1 / e), axis=1)
    n, u, ok = optimal_mass_ratios_batch(c, e, dv)
    for k in range(m):
        reachable = dv[k] < max_ideal_delta_v(c[k], e[k])
        assert ok[k] == reachable
        if reachable:
            ref = optimal_mass_ratios(c[k], e[k], dv[k])
            assert n[k] == pytest.approx(ref.mass_ratios, rel=1e-9)
        else:
            assert np.isnan(n[k]).all()


def test_stack_delta_v_inverts_stack_masses():
    """Tsiolkovsky stage by stage on the masses built from mass ratios returns the same delta-v
    (round trip; consistency check, no external source)."""
    n = [3.0, 2.5, 1.8]
    eps = [0.08, 0.1, 0.15]
    c = [2900.0, 3200.0, 3100.0]
    m = stack_masses(n, eps, 250.0)
    total, per = stack_delta_v(c, m["propellant_mass_kg"], m["structural_mass_kg"], 250.0)
    assert per == pytest.approx([ci * math.log(ni) for ci, ni in zip(c, n)], rel=1e-12)
