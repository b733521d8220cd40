"""Dispersed flights: the linear case against analytic propagation, how inputs change a stage,
the nominal against `sizing fly`, orbit and hobby cases."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from dispersion_helpers import HERON, JACKDAW, ROOT, write_table
from sizing.dispersion.case import _outage_kg, _vary_stage, case_from_file, MSG_CURVE_MIXTURE
from sizing.dispersion.flights import fly_nominal, fly_samples
from sizing.dispersion.run import one_sigma_effects
from sizing.errors import FieldError
from sizing.physics.vehicle import FlightStage
from sizing.units import G0_M_S2

LINEAR_TABLE = """
[dispersions]
seed = 17

[[dispersions.input]]
quantity = "*.isp"
distribution = "normal"
sigma = "1 %"

[[dispersions.input]]
quantity = "*.propellant_mass"
distribution = "normal"
sigma = "0.5 %"

[[dispersions.input]]
quantity = "*.structural_mass"
distribution = "uniform"
half_width = "3 %"

[[dispersions.input]]
quantity = "payload_mass"
distribution = "uniform"
low = "4.4 kg"
high = "4.6 kg"

[[dispersions.correlation]]
quantities = ["boost.isp", "sustain.isp"]
coefficient = 0.5
"""


def _rocket_equation_jacobian(case):
    """Analytic partials of the ideal delta-v dv = sum_i c_i ln(m0_i / mf_i) of a stack (Tsiolkovsky;
    Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., eq. 4-6 per stage): with respect to each
    stage's Isp [m/s per s], propellant and structural mass [m/s per kg] and the payload."""
    st = case.vehicle.stages
    P = case.payload_mass_kg
    n = len(st)
    m0 = [P + sum(s.propellant_mass_kg + s.structural_mass_kg for s in st[i:]) for i in range(n)]
    mf = [m0[i] - st[i].propellant_mass_kg for i in range(n)]
    c = [s.isp_vac_s * G0_M_S2 for s in st]
    d_isp = [G0_M_S2 * math.log(m0[i] / mf[i]) for i in range(n)]
    d_mp = [sum(c[i] / m0[i] for i in range(j + 1)) - sum(c[i] / mf[i] for i in range(j)) for j in range(n)]
    d_ms = [sum(c[i] * (1 / m0[i] - 1 / mf[i]) for i in range(j + 1)) for j in range(n)]
    d_p = sum(c[i] * (1 / m0[i] - 1 / mf[i]) for i in range(n))
    by = {}
    for j, s in enumerate(st):
        by[f"{s.name}.isp"], by[f"{s.name}.propellant_mass"], by[f"{s.name}.structural_mass"] = d_isp[j], d_mp[j], d_ms[j]
    by["payload_mass"] = d_p
    return np.array([by[m.name] for m in case.marginals])


def test_dispersion_linear_case_matches_analytic_propagation(tmp_path):
    """Ideal delta-v of dispersed flights against first-order propagation of the rocket equation's
    partials with the input covariance (JCGM 100:2008, GUM, eq. 13): the flown one-sigma effects
    (central differences) to 0.2 %, the Monte Carlo standard deviation within 4 standard errors."""
    case = case_from_file(HERON, dispersions=write_table(tmp_path, LINEAR_TABLE))
    J = _rocket_equation_jacobian(case)
    sig = np.array([m.std for m in case.marginals])
    R = np.array(case.spec.correlation)
    analytic = float(math.sqrt((J * sig) @ R @ (J * sig)))
    rss = one_sigma_effects(case, 0.0, figure=lambda c, f: f["ideal_delta_v_m_s"])
    assert np.array(rss["one_sigma_effects"]) == pytest.approx(J * sig, rel=2e-3, abs=1e-6)
    n = 1500
    outs = fly_samples([{"case_id": i} for i in range(n)], case)
    assert all(o["status"] == "ok" for o in outs)
    dv = np.array([o["metrics"]["ideal_delta_v_m_s"] for o in outs])
    assert dv.std(ddof=1) == pytest.approx(analytic, rel=4 / math.sqrt(2 * (n - 1)))
    nominal = fly_nominal(case)["metrics"]["ideal_delta_v_m_s"]
    means = np.array([m.mean for m in case.marginals]) - np.array([m.nominal for m in case.marginals])
    assert dv.mean() == pytest.approx(nominal + J @ means, abs=4 * analytic / math.sqrt(n))


def _stage(**kw):
    base = dict(name="s", propellant_mass_kg=10.0, structural_mass_kg=4.0, isp_vac_s=200.0, diameter_m=0.1)
    base.update(kw)
    return FlightStage(base.pop("name"), base.pop("propellant_mass_kg"), base.pop("structural_mass_kg"),
                       base.pop("isp_vac_s"), **base)


def test_vary_constant_thrust_stage_keeps_thrust_and_nozzle():
    st = _stage(thrust_vac_n=1000.0, isp_sl_s=180.0)
    v = _vary_stage(st, {"isp": 1.02, "propellant_mass": 1.01}, None)
    assert v.thrust_vac_n == 1000.0
    assert v.burn_time_s == pytest.approx(st.burn_time_s * 1.02 * 1.01)
    assert v.exit_area_m2 == pytest.approx(st.exit_area_m2)
    v = _vary_stage(st, {"thrust": 1.05, "drag": 1.1}, None)
    assert v.burn_time_s == pytest.approx(st.burn_time_s / 1.05)
    assert v.total_impulse_vac_n_s == pytest.approx(st.total_impulse_vac_n_s)
    assert v.drag.cd == pytest.approx(tuple(1.1 * c for c in st.drag.cd))


def test_vary_thrust_curve_impulse_and_burn_rate():
    curve = ((0.0, 0.5, 2.0), (0.0, 800.0, 600.0))
    prop = ((0.0, 1.0, 2.0), (10.0, 4.0, 0.0))
    st = _stage(thrust_curve=curve, propellant_mass_curve=prop, nozzle_exit_area_m2=0.0)
    v = _vary_stage(st, {"total_impulse": 1.1}, None)
    assert v.total_impulse_vac_n_s == pytest.approx(1.1 * st.total_impulse_vac_n_s)
    assert v.burn_time_s == st.burn_time_s
    v = _vary_stage(st, {"thrust": 1.25, "propellant_mass": 1.02}, None)
    assert v.total_impulse_vac_n_s == pytest.approx(st.total_impulse_vac_n_s)
    assert v.burn_time_s == pytest.approx(st.burn_time_s / 1.25)
    assert v.propellant_mass_curve[1][0] == pytest.approx(10.2) and v.propellant_mass_kg == pytest.approx(10.2)
    with pytest.raises(FieldError, match=MSG_CURVE_MIXTURE):
        _vary_stage(st, {"mixture_ratio": 2.0}, 2.1)


def test_mixture_ratio_outage_first_order_slopes():
    """Outage of a load mixed at O/F r0 burnt at r0 (1 + d): m_p d / (1 + r0) for d > 0 (oxidiser runs
    out) and m_p r0 |d| / (1 + r0) for d < 0 (fuel runs out), to first order (mass balance of the
    two tanks, derived in the test)."""
    mp, r0, d = 100.0, 2.6, 1e-4
    assert _outage_kg(mp, r0, r0) == pytest.approx(0.0, abs=1e-12)
    assert _outage_kg(mp, r0, r0 * (1 + d)) == pytest.approx(mp * d / (1 + r0), rel=1e-3)
    assert _outage_kg(mp, r0, r0 * (1 - d)) == pytest.approx(mp * r0 * d / (1 + r0), rel=1e-3)
    st = _stage(thrust_vac_n=1000.0)
    v = _vary_stage(st, {"mixture_ratio": 2.7}, 2.6)
    dead = _outage_kg(10.0, 2.6, 2.7)
    assert (v.propellant_mass_kg, v.structural_mass_kg) == pytest.approx((10.0 - dead, 4.0 + dead))


def test_dispersion_nominal_matches_sizing_fly(tmp_path):
    """The undispersed flight of a run is the design's `sizing fly` flight, to the accuracy stated in
    DISPERSION_STEP_NOTE (adaptive steps without the step cap): apogee within 1 m; orbit energy within
    0.01 m/s."""
    from sizing.optimize.flight_problem import fly_problem
    from sizing.problem.load import load_problem

    case = case_from_file(HERON, dispersions=write_table(tmp_path))
    _, fr = fly_problem(load_problem(HERON))
    nom = fly_nominal(case)["metrics"]
    assert nom["apogee_above_site_m"] == pytest.approx(fr.apogee_m - 1400.0, abs=1.0)
    assert nom["max_dynamic_pressure_pa"] == pytest.approx(fr.max_dynamic_pressure_pa, rel=1e-4)
    jack = case_from_file(JACKDAW, dispersions=ROOT / "problems" / "dispersions" / "jackdaw.toml")
    nom = fly_nominal(jack)["metrics"]
    _, fr = fly_problem(load_problem(JACKDAW))
    assert nom["insertion_speed_m_s"] == pytest.approx(fr.orbit.speed_m_s, abs=0.01)
    assert abs(nom["delta_v_shortfall_m_s"]) < 1.0  # the design was sized to this orbit


def test_dispersion_orbit_samples_carry_the_orbit(tmp_path):
    case = case_from_file(JACKDAW, dispersions=ROOT / "problems" / "dispersions" / "jackdaw.toml")
    outs = fly_samples([{"case_id": i} for i in range(24)], case)
    assert {o["status"] for o in outs} == {"ok"}
    for o in outs:
        m = o["metrics"]
        assert m["target_margin"] == pytest.approx(m["reserve_delta_v_m_s"] - m["delta_v_shortfall_m_s"])
        assert 90 < m["inclination_deg"] < 105 and m["final_mass_kg"] > 0
    short = np.array([o["metrics"]["delta_v_shortfall_m_s"] for o in outs])
    assert np.ptp(short) > 1.0  # the inputs do disperse the flight


def test_dispersion_hobby_stack_lands_downwind_of_its_apogee():
    """Tern Dart demo: the stack search's motors fly with the file's wind; the descent drifts the
    top stage downwind (wind from 250 deg blows towards 70 deg: east-north-east)."""
    from sizing.problem.hobby import hobby_problem_from_dict
    from sizing.problem.load import read_toml
    from sizing.dispersion.case import case_from_hobby

    data = dict(read_toml(ROOT / "problems" / "hobby_motor_two_stage.toml"))
    data["dispersions"] = read_toml(ROOT / "problems" / "dispersions" / "tern_dart.toml")["dispersions"]
    case = case_from_hobby(hobby_problem_from_dict(data, source="tern.toml", base_dir=ROOT / "problems"))
    assert case.hobby["motors"] and case.descent is not None
    outs = fly_samples([{"case_id": i} for i in range(30)], case)
    m = {k: np.array([o["metrics"][k] for o in outs]) for k in ("landing_east_m", "landing_north_m",
                                                               "apogee_east_m", "apogee_north_m", "descent_time_s")}
    drift_e, drift_n = m["landing_east_m"] - m["apogee_east_m"], m["landing_north_m"] - m["apogee_north_m"]
    bearing = math.degrees(math.atan2(drift_e.mean(), drift_n.mean())) % 360
    assert bearing == pytest.approx(70.0, abs=25.0)
    assert np.all(m["descent_time_s"] > 10)


def test_dispersion_sample_with_no_vehicle_is_invalid(tmp_path):
    table = """
[dispersions]
[[dispersions.input]]
quantity = "sustain.structural_mass"
distribution = "list"
values = [-1.0, 6.0]
"""
    case = case_from_file(HERON, dispersions=write_table(tmp_path, table))
    outs = fly_samples([{"case_id": i} for i in range(12)], case)
    kinds = {o["status"] for o in outs}
    assert kinds == {"ok", "invalid"}
    bad = next(o for o in outs if o["status"] == "invalid")
    assert "structural_mass" in bad["message"] and bad["metrics"] == {}


def test_dispersion_case_errors_are_one_line(tmp_path):
    from sizing.errors import ProblemDefinitionError
    from sizing.dispersion.case import MSG_NEEDS_NOMINAL, MSG_NO_DISPERSIONS
    from sizing.problem.dispersions import MSG_PERCENT_OF_ZERO

    with pytest.raises(ProblemDefinitionError, match=re_escape(MSG_NO_DISPERSIONS)):
        case_from_file(HERON)
    t = write_table(tmp_path, "[dispersions]\n[[dispersions.input]]\nquantity = \"boost.mixture_ratio\"\n"
                              "distribution = \"normal\"\nsigma = \"1 %\"\n")
    with pytest.raises(ProblemDefinitionError, match=re_escape(MSG_NEEDS_NOMINAL)):
        case_from_file(HERON, dispersions=t)
    t = write_table(tmp_path, "[dispersions]\n[[dispersions.input]]\nquantity = \"boost.coast_before_ignition\"\n"
                              "distribution = \"normal\"\nsigma = \"10 %\"\n")
    with pytest.raises(ProblemDefinitionError, match=re_escape(MSG_PERCENT_OF_ZERO)):
        case_from_file(HERON, dispersions=t)
    t = write_table(tmp_path, "[dispersions]\nreserve_propellant = 10\n[[dispersions.input]]\n"
                              "quantity = \"boost.isp\"\ndistribution = \"normal\"\nsigma = 1\n")
    with pytest.raises(ProblemDefinitionError, match="dispersions.reserve_propellant: must be less than"):
        case_from_file(HERON, dispersions=t)


def re_escape(text: str) -> str:
    import re

    return re.escape(text)


def test_wind_profile_of_a_sample_scales_and_turns_the_nominal(tmp_path):
    from sizing.dispersion.case import DispersionCase, _kernel_wind
    from sizing.physics.wind import WindProfile

    nominal = WindProfile("power_law", speed_m_s=4.0, direction_from_deg=250.0)
    case = replace(case_from_file(HERON, dispersions=write_table(tmp_path)), wind=nominal)
    assert isinstance(case, DispersionCase)
    k, d = case._winds(8.0, 280.0)
    assert d.speed_m_s == 8.0 and d.direction_from_deg == 280.0 and d.exponent == nominal.exponent
    assert (k.speed_m_s, k.from_deg, k.exponent) == (8.0, 280.0, nominal.exponent)
    assert _kernel_wind(None) is None
