"""Stage-model sizing (SLSQP program): agreement with Lagrange, T/W as a design variable, limits."""

from __future__ import annotations

import copy
import math
import re
import warnings

import pytest

from sizing.optimize.api import solve
from sizing.physics.propellants import shipped_propellants
from sizing.problem.load import problem_from_dict
from sizing.result import Status

ZERO_BUT_TANKS = {"insulation": 0, "engines": 0, "thrust_structure": 0, "interstage": 0, "avionics": 0,
                  "wiring": 0}


def _tank_only_stage(name, propellant, k_vol, tw):
    return {"name": name, "propellant": propellant, "diameter": 2.0, "thrust_to_weight": tw,
            "structure": {"fuel_tank_mass_per_volume": k_vol, "oxidiser_tank_mass_per_volume": k_vol,
                          "ullage": 0.05, "fixed": dict(ZERO_BUT_TANKS)}}


def _reduced_problem(**mission):
    """Stage models whose structure is only tanks per unit volume: m_s = k_v (1+u) m_p/rho_bulk,
    a fixed structural coefficient eps = a/(1+a), a = k_v (1+u)/rho_bulk."""
    m = {"payload_mass": 300.0, "delta_v": 8500.0}
    m.update(mission)
    return {"mission": m, "stage": [_tank_only_stage("booster", "lox-rp1", 60.0, 1.4),
                                    _tank_only_stage("upper", "lox-lh2", 30.0, 0.8)]}


def _equivalent_fixed(data):
    props = shipped_propellants()
    out = copy.deepcopy(data)
    for st in out["stage"]:
        s = st.pop("structure")
        a = s["fuel_tank_mass_per_volume"] * (1 + s["ullage"]) / props[st["propellant"]].bulk_density_kg_m3
        st["structural_coefficient"] = a / (1 + a)
    return out


@pytest.mark.parametrize("mission", [{}, {"payload_mass": None, "gross_mass": 60000.0},
                                     {"delta_v": None, "gross_mass": 60000.0}],
                         ids=["gross_mass", "payload_mass", "delta_v"])
def test_stage_model_reduces_to_lagrange(mission):
    """Limit case: a model that is a fixed structural coefficient agrees with the Lagrange closed form
    (Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Sec. 11.6)."""
    data = _reduced_problem(**mission)
    for k in [k for k, v in data["mission"].items() if v is None]:
        del data["mission"][k]
    model = solve(problem_from_dict(data))
    ref = solve(problem_from_dict(_equivalent_fixed(data)), method="lagrange")
    assert model.success, model.message
    assert ref.method == "lagrange" and model.method == "stage-model slsqp"
    for key in ("gross_mass_kg", "payload_mass_kg", "delta_v_m_s"):
        assert getattr(model, key) == pytest.approx(getattr(ref, key), rel=1e-7), key
    for a, b in zip(model.stages, ref.stages):
        assert a.propellant_mass_kg == pytest.approx(b.propellant_mass_kg, rel=1e-6)
        assert a.structural_coefficient == pytest.approx(b.structural_coefficient, rel=1e-9)
        assert sum(a.mass_breakdown_kg.values()) == pytest.approx(a.structural_mass_kg, rel=1e-9)


def _tw_problem(loss):
    up = {"name": "upper", "propellant": "lox-ch4", "diameter": 1.8, "expansion_ratio": 60.0,
          "min_thrust_to_weight": 0.4, "max_thrust_to_weight": 3.0, "structure": {}}
    if loss:
        up["gravity_loss_factor"] = 0.3
    return {"mission": {"payload_mass": 250.0, "delta_v": 8000.0},
            "stage": [{"name": "booster", "propellant": "lox-rp1", "diameter": 1.8, "engine_count": 5,
                       "thrust_to_weight": 1.4, "min_delta_v_share": 0.3, "structure": {}}, up]}


def test_thrust_to_weight_goes_to_its_lower_bound_without_losses():
    """Ideal delta-v: thrust only costs engine mass, so the optimum takes the smallest T/W allowed."""
    r = solve(problem_from_dict(_tw_problem(loss=False)))
    assert r.success, r.message
    assert r.stage("upper").thrust_to_weight == pytest.approx(0.4, rel=1e-6)


def test_thrust_to_weight_optimum_is_interior_with_gravity_loss():
    """With the gravity-loss estimate the optimum T/W balances burn time against engine mass: fixing
    T/W on either side of it costs gross mass."""
    data = _tw_problem(loss=True)
    r = solve(problem_from_dict(data))
    assert r.success, r.message
    tw = r.stage("upper").thrust_to_weight
    assert 0.45 < tw < 2.9
    for other in (0.8 * tw, 1.25 * tw):
        d = copy.deepcopy(data)
        up = d["stage"][1]
        del up["min_thrust_to_weight"], up["max_thrust_to_weight"]
        up["thrust_to_weight"] = other
        assert solve(problem_from_dict(d)).gross_mass_kg > r.gross_mass_kg
    up = r.stage("upper")
    assert up.gravity_loss_m_s == pytest.approx(9.80665 * 0.3 * up.burn_time_s, rel=1e-9)
    assert up.burn_time_s == pytest.approx(up.propellant_mass_kg * up.exhaust_velocity_m_s / up.thrust_vac_n,
                                           rel=1e-12)
    net = sum(s.delta_v_m_s - (s.gravity_loss_m_s or 0.0) for s in r.stages)
    assert net == pytest.approx(8000.0, rel=1e-7)


def test_limits_hold_at_the_returned_design():
    data = _tw_problem(loss=True)
    data["stage"][1]["max_ignition_mass"] = 5500.0
    r = solve(problem_from_dict(data))
    assert r.success, r.message
    assert r.stage("upper").ignition_mass_kg <= 5500.0 * (1 + 1e-7)
    assert r.stage("booster").delta_v_share >= 0.3 - 1e-7
    assert all(v <= 1e-7 for v in r.violations.values()), r.violations


def test_unreachable_target_gives_complete_failed_result():
    data = _tw_problem(loss=False)
    data["mission"]["delta_v"] = 30000.0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = solve(problem_from_dict(data))
    assert not r.success and r.status in (Status.INFEASIBLE, Status.MAX_ITERATIONS, Status.SOLVER_ERROR)
    assert [s.name for s in r.stages] == ["booster", "upper"] and math.isnan(r.gross_mass_kg)


@pytest.mark.parametrize("method", ["lagrange", "cvxpy"])
def test_fixed_coefficient_methods_refuse_stage_models(method):
    from sizing.optimize._stage_nlp import MSG_MODEL_METHOD

    with pytest.raises(ValueError, match=re.escape(MSG_MODEL_METHOD)):
        solve(problem_from_dict(_tw_problem(loss=False)), method=method)


def test_propellant_without_structure_adds_geometry_to_fixed_coefficient_result():
    data = {"mission": {"payload_mass": 100.0, "delta_v": 6000.0},
            "stage": [{"name": "one", "propellant": "lox-ch4", "diameter": 1.2, "structural_coefficient": 0.1,
                       "thrust_to_weight": 1.5}, {"name": "two", "isp": 320, "structural_coefficient": 0.12}]}
    r = solve(problem_from_dict(data))
    assert r.method == "lagrange" and r.success
    one = r.stage("one")
    p = shipped_propellants()["lox-ch4"]
    assert one.isp_s == pytest.approx(p.isp_vac_s, rel=1e-12)
    assert one.fuel_mass_kg == pytest.approx(one.propellant_mass_kg / (1 + p.mixture_ratio), rel=1e-12)
    assert one.fuel_volume_m3 == pytest.approx(one.fuel_mass_kg / p.fuel_density_kg_m3 * 1.03, rel=1e-12)
    assert one.stage_length_m > 0 and one.mass_breakdown_kg is None
    assert r.stage("two").propellant is None
