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
from sizing.units import GM_EARTH_M3_S2, R_EARTH_EQ_M

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
