"""Orbit insertion through a low transfer orbit: the two starting designs of the orbit sizing,
the transfer-perigee limit and the `mission.transfer` plan."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from sizing import problem_from_dict, solve
from sizing.cli import EXIT_BAD_INPUT, main
from sizing.problem.load import read_toml
from sizing.units import GM_EARTH_M3_S2, OMEGA_EARTH_RAD_S, R_EARTH_EQ_M

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "problems" / "jackdaw_orbit.toml"


def _problem(**mission):
    data = dict(read_toml(DEMO))
    data["mission"] = dict(data["mission"], **mission)
    return problem_from_dict(data, source="jackdaw_orbit.toml")


def _coast_perigee_m(result, tmp_path) -> tuple[float, float]:
    """(lowest altitude of the insertion coast above the equatorial radius [m], coast [s]) of the
    written design, re-flown by the flight kernel."""
    from sizing.dispersion.case import case_from_file
    from sizing.physics.flight import fly_many
    from sizing.report.design import write_design

    case = case_from_file(write_design(result, tmp_path / "design.toml"),
                          dispersions=ROOT / "problems" / "dispersions" / "jackdaw.toml")
    fr = fly_many([case.vehicle], [case.site], profiles=[case.ascent], **dict(case.fly_options))[0]
    y = np.asarray(fr.coast_start_state, float)
    r, v = y[:3], y[3:6]
    a = 1.0 / (2.0 / np.linalg.norm(r) - v @ v / GM_EARTH_M3_S2)
    e = np.linalg.norm(((v @ v - GM_EARTH_M3_S2 / np.linalg.norm(r)) * r - (r @ v) * v) / GM_EARTH_M3_S2)
    climbing = r @ v >= 0.0
    lowest = np.linalg.norm(r) if climbing else a * (1.0 - e)
    return float(lowest - R_EARTH_EQ_M), case.ascent.insertion.coast_s


@pytest.mark.slow
def test_high_orbit_is_lighter_through_a_low_transfer_that_respects_the_perigee_limit(tmp_path):
    """At 900 km the low-transfer start beats the short coast (the Hohmann transfer is the
    cheaper two-impulse path between coplanar circles; Curtis, Orbital Mechanics for
    Engineering Students, 3rd ed., Sec. 6.2). The coast then lasts about half the transfer
    orbit's period (Kepler's third law, Curtis Eq. 2.83) and never dips below the 180 km
    transfer-perigee limit (common practice, no source)."""
    both = solve(_problem(orbit_altitude="900 km"))
    short = solve(_problem(orbit_altitude="900 km", transfer="short_coast"))
    assert both.success and short.success, (both.message, short.message)
    assert both.gross_mass_kg < 0.97 * short.gross_mass_kg
    assert any("two starting designs" in w and "low-transfer" in w for w in both.warnings)
    lowest, coast = _coast_perigee_m(both, tmp_path)
    assert lowest >= 180e3 - 1e3
    a = R_EARTH_EQ_M + 0.5 * (lowest + 900e3)
    assert coast == pytest.approx(math.pi * math.sqrt(a ** 3 / GM_EARTH_M3_S2), rel=0.15)
    # the short-coast plan keeps to at most an eighth of the target orbit's period (this tool's definition)
    period = 2.0 * math.pi * math.sqrt((R_EARTH_EQ_M + 900e3) ** 3 / GM_EARTH_M3_S2)  # Curtis Eq. 2.83
    assert short.flight["steering"]["insertion"]["coast_s"] <= 0.125 * period + 1e-6
    for r in (both, short):
        f = r.flight
        assert abs(f["perigee_altitude_m"] - 900e3) <= f["target_tolerance"] + 1.0


@pytest.mark.slow
def test_a_higher_transfer_perigee_limit_holds(tmp_path):
    r = solve(_problem(orbit_altitude="900 km", min_transfer_perigee="300 km"))
    assert r.success, r.message
    lowest, _ = _coast_perigee_m(r, tmp_path)
    assert lowest >= 300e3 - 1e3


@pytest.mark.parametrize("key, value, words", [
    ("transfer", "longest", "mission.transfer"),
    ("min_transfer_perigee", "-5 km", "mission.min_transfer_perigee"),
])
def test_bad_transfer_keys_are_one_line_errors(tmp_path, capsys, key, value, words):
    text = DEMO.read_text().replace("inclination = 97.5", f'inclination = 97.5\n{key} = "{value}"')
    path = tmp_path / "bad.toml"
    path.write_text(text)
    assert main(["check", str(path)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err.strip().splitlines()
    assert any(words in line and "bad.toml" in line for line in err), err
    assert "Traceback" not in "\n".join(err)


@pytest.mark.slow
def test_the_transfer_perigee_limit_costs_little_where_the_free_optimum_dips_below_it():
    """Consistency check, no external source. A low-thrust upper stage (thrust-to-weight 0.8)
    whose free optimum coasts below 180 km: with the limit the optimiser continues from the free
    optimum, and the limited design is a modestly heavier one (it was 3.9 times heavier when the
    limit was imposed from the start)."""
    data = dict(read_toml(ROOT / "problems" / "corvid_orbit.toml"))
    booster, upper = (dict(s) for s in data["stage"])
    booster["structure"] = {"extra_length": 1.5}
    upper["structure"] = {"extra_length": 1.0, "engine_thrust_to_weight": 45.0}
    data["stage"] = [booster, upper]
    free = dict(data, mission=dict(data["mission"], min_transfer_perigee=0))
    r_lim = solve(problem_from_dict(data, source="variant.toml"))
    r_free = solve(problem_from_dict(free, source="variant.toml"))
    assert r_lim.success and r_free.success, (r_lim.message, r_free.message)
    assert r_free.gross_mass_kg <= r_lim.gross_mass_kg <= 1.15 * r_free.gross_mass_kg


@pytest.mark.slow
def test_coast_gravity_term_is_the_two_body_speed_change_and_the_budget_still_closes(tmp_path):
    """The budget's coast term is the gravity loss between cut-off and insertion ignition,
    int -g . v_rel/|v_rel| dt (v_rel Earth-relative, the budget's frame; docs/physics-flight.md
    Sec. 5), here integrated along an independent two-body propagation (scipy solve_ivp DOP853)
    of the coast-start state for the coast's duration. Without Earth rotation it would be the
    inertial speed given up for height (vis-viva; Curtis, 3rd ed., Eq. 2.80). The powered and
    coast parts add up to the gravity loss and the budget closes to the insertion speed."""
    from scipy.integrate import solve_ivp

    from sizing.dispersion.case import case_from_file
    from sizing.optimize.flight_problem import COAST_BUDGET_KEY, POWERED_GRAVITY_KEY
    from sizing.physics.flight import fly_many
    from sizing.report.design import write_design

    r = solve(problem_from_dict(dict(read_toml(DEMO)), source="jackdaw_orbit.toml"))
    assert r.success, r.message
    f = r.flight
    coast = f["coast_gravity_loss_m_s"]
    budget = f["delta_v_budget_m_s"]
    assert coast > 100.0 and budget[COAST_BUDGET_KEY] == pytest.approx(-coast)
    assert budget[POWERED_GRAVITY_KEY] + budget[COAST_BUDGET_KEY] == pytest.approx(-f["losses_m_s"]["gravity"])
    terms = [v for k, v in budget.items() if k != "final inertial speed"]
    assert sum(terms) == pytest.approx(budget["final inertial speed"], abs=0.1)

    case = case_from_file(write_design(r, tmp_path / "design.toml"),
                          dispersions=ROOT / "problems" / "dispersions" / "jackdaw.toml")
    fr = fly_many([case.vehicle], [case.site], profiles=[case.ascent], **dict(case.fly_options))[0]
    ins = f["steering"]["insertion"]
    duration = ins["ignition_time_s"] - ins["cutoff_time_s"]

    def rhs(_t, y):
        r3 = (y[0] ** 2 + y[1] ** 2 + y[2] ** 2) ** 1.5
        g = [-GM_EARTH_M3_S2 * y[k] / r3 for k in range(3)]
        v_rel = np.array([y[3] + OMEGA_EARTH_RAD_S * y[1], y[4] - OMEGA_EARTH_RAD_S * y[0], y[5]])
        return [y[3], y[4], y[5], *g, -float(np.dot(g, v_rel)) / float(np.linalg.norm(v_rel))]

    y0 = np.append(np.asarray(fr.coast_start_state, float), 0.0)
    end = solve_ivp(rhs, (0.0, duration), y0, method="DOP853", rtol=1e-12, atol=1e-6).y[:, -1]
    assert fr.coast_gravity_loss_m_s == pytest.approx(end[6], abs=0.05)
    assert coast == pytest.approx(fr.coast_gravity_loss_m_s, abs=0.01)  # sizing flights cap the step; these do not
