"""Published worked examples, solved through the public API with every method."""

from __future__ import annotations

import pytest

from sizing import solve
from sizing.testing import assert_result_close, load_reference_case


@pytest.mark.parametrize("method", ["lagrange", "cvxpy", "slsqp"])
def test_reference_curtis_three_stage(method):
    """Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Sec. 11.6, Example 11.6
    (example number and printed values from memory; reproduced by computation with g0 = 9.81);
    printed to 4 s.f."""
    case = load_reference_case("curtis_three_stage")
    result = solve(case.problem, method=method)
    rel = case.tolerance_rel
    assert_result_close(result, {"gross_mass_kg": case.expected["gross_mass_kg"],
                                 "mass_ratio": case.expected["mass_ratio"],
                                 "stage_mass_kg": case.expected["stage_mass_kg"]}, rel)


def test_reference_akin_single_stage():
    """D. Akin, ENAE 791 Launch and Entry Vehicle Design, University of Maryland, slides
    "Mass Estimating Relations" (2016), slides 3-5 (found; read as scribd document 557678347):
    M0 = 153 000 kg, M_inert = 12 240 kg, M_prop = 135 800 kg (g0 = 9.8)."""
    case = load_reference_case("akin_single_stage")
    result = solve(case.problem)
    assert_result_close(result, case.expected, case.tolerance_rel)


@pytest.mark.parametrize("method", ["lagrange", "cvxpy", "slsqp"])
def test_reference_curtis_restricted_two_stage_max_delta_v(method):
    """Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Example 11.4 (b) (inputs as
    quoted on holooly.com "Question 11.4"): restricted two-stage with m0 = 200 t, m_PL = 10 t
    -> v_bo = 7406.86 m/s and stage masses computed from the published inputs (the book's
    printed 7.41 km/s is from memory). (Tabulated in the project's shared check values,
    sec. 1.2.)"""
    case = load_reference_case("curtis_restricted_two_stage")
    result = solve(case.problem, method=method)
    if method == "lagrange":
        assert_result_close(result, case.expected, case.tolerance_rel)
    else:
        # maximum delta-v is flat to first order in the split, so the numerical
        # solvers meet the objective to 1e-6 but place the masses to ~1e-5
        assert_result_close(result, {"delta_v_m_s": case.expected["delta_v_m_s"]}, 1e-6)
        assert_result_close(result, case.expected, 1e-4)
