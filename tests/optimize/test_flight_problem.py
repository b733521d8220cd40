"""Problem files with apogee / orbit targets and `sizing fly` for given designs."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from sizing import load_problem, problem_from_dict, solve
from sizing.cli import EXIT_BAD_INPUT, EXIT_FAILED, EXIT_OK, main
from sizing.optimize.flight_problem import fly_problem

ROOT = Path(__file__).resolve().parents[2]
APOGEE = ROOT / "problems" / "heron_apogee.toml"


@pytest.fixture(scope="module")
def apogee_result():
    return solve(load_problem(APOGEE))


def test_solve_apogee_target_meets_target(apogee_result):
    """Consistency check, no external source: the sized design meets the target and is sized
    for the ideal delta-v the simulation needed."""
    r = apogee_result
    assert r.success, r.message
    f = r.flight
    assert abs(f["apogee_m"] - 30_000.0) <= f["target_tolerance"] + 1e-9
    assert f["apogee_above_site_m"] == f["apogee_m"]
    assert f["apogee_above_sea_level_m"] == pytest.approx(f["apogee_m"] + 1400.0)
    assert f["target"]["apogee_above_site_m"] == 30_000.0
    assert f["achieved"]["apogee_above_site_m"] == pytest.approx(f["apogee_m"])
    assert f["losses_m_s"]["gravity"] > 0 and f["losses_m_s"]["drag"] > 0
    # the stage table is the design that was flown
    assert r.delta_v_m_s == pytest.approx(f["ideal_delta_v_m_s"], rel=1e-6)
    assert r.trade_factors and r.trade_factors["gross_mass_per_payload_kg"] > 1.0


def test_solve_apogee_budget_closes(apogee_result):
    """The flown ideal delta-v equals speed at burnout plus losses within 0.1 % (issue requirement;
    identity from the definitions of the loss terms, consistency check, no external source)."""
    f = apogee_result.flight
    assert abs(f["budget_residual_m_s"]) <= 1e-3 * f["ideal_delta_v_flown_m_s"]


def test_fly_sized_design_reproduces_apogee(apogee_result, tmp_path):
    """Flying the sized masses as a design under review gives the same apogee (consistency check,
    no external source)."""
    data = load_problem(APOGEE).raw
    data = json.loads(json.dumps(data))
    del data["mission"]["apogee"]
    for st, sr in zip(data["stage"], apogee_result.stages):
        st["propellant_mass"] = sr.propellant_mass_kg
        st["structural_mass"] = sr.structural_mass_kg
    problem = problem_from_dict(data, source="<sized>")
    _vehicle, fr = fly_problem(problem)
    assert fr.apogee_m - problem.launch.altitude_m == pytest.approx(apogee_result.flight["apogee_m"], rel=1e-6)


def test_design_file_without_target_solves_for_delta_v():
    p = load_problem(ROOT / "problems" / "heron_as_built.toml")
    assert p.solve_for == "delta_v"
    assert p.gross_mass_kg == pytest.approx(4.5 + 13.5 + 8.3 + 4.2 + 3.0)


def test_solve_apogee_out_of_reach_reports_best(tmp_path, capsys):
    text = APOGEE.read_text().replace('apogee = "30 km"', 'apogee = "900 km"')
    p = tmp_path / "far.toml"
    p.write_text(text)
    code = main(["solve", str(p)])
    out = capsys.readouterr()
    assert code == EXIT_FAILED, out
    assert "Traceback" not in out.err


def test_solve_apogee_needs_thrust_to_weight(tmp_path, capsys):
    p = tmp_path / "no_tw.toml"
    p.write_text(APOGEE.read_text().replace("thrust_to_weight = 6.0\n", ""))
    assert main(["solve", str(p)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert "stage[2] (sustain).thrust_to_weight: required for apogee and orbit targets" in err


def test_solve_apogee_needs_first_stage_diameter(tmp_path, capsys):
    p = tmp_path / "no_d.toml"
    p.write_text(APOGEE.read_text().replace('diameter = "0.16 m"\n', ""))
    assert main(["solve", str(p)]) == EXIT_BAD_INPUT
    assert "stage[1] (boost).diameter: required for flight" in capsys.readouterr().err


def test_cli_fly_writes_trajectory_csv_with_units(tmp_path, capsys):
    out = tmp_path / "trajectory.csv"
    assert main(["fly", str(ROOT / "problems" / "heron_as_built.toml"), "--out", str(out)]) == EXIT_OK
    header = out.read_text().splitlines()[0].split(",")
    assert header[:3] == ["time [s]", "altitude above sea level [m]", "altitude above launch site [m]"]
    assert all("[" in h for h in header)
    text = capsys.readouterr().out
    assert "apogee above launch site" in text and "not flight clearance" in text
    assert "not flight clearance" in (tmp_path / "CAUTION.txt").read_text()  # the data table stays numeric


def test_cli_fly_json(capsys):
    assert main(["fly", str(ROOT / "problems" / "heron_as_built.toml"), "--json"]) == EXIT_OK
    data = json.loads(capsys.readouterr().out)
    for key in ("apogee_m", "losses_m_s", "max_dynamic_pressure_pa", "max_acceleration_m_s2", "burnouts"):
        assert key in data


def test_cli_fly_needs_masses(capsys):
    assert main(["fly", str(APOGEE)]) == EXIT_BAD_INPUT
    assert "propellant_mass: required to fly a given design" in capsys.readouterr().err


def test_cli_fly_rejects_non_csv_out(tmp_path, capsys):
    assert main(["fly", str(ROOT / "problems" / "heron_as_built.toml"), "--out", str(tmp_path / "t.xlsx")]) == EXIT_BAD_INPUT


def test_solve_orbit_demo_then_fly_its_design_file(tmp_path, capsys):
    """The demo launcher: circular 500 km at 97.5 deg within 1 km and 0.05 deg (issue requirement),
    losses within the typical 1.5-2.5 km/s for a small launcher (1.5-2 km/s typical for large
    vehicles: EPFL Graph Search page "Gravity loss", Wikipedia-derived, found; higher for small ones:
    from memory, no specific source), the reason for a high gravity loss shown; then `sizing fly` on
    the written design file reproduces the orbit to the last digit (one code path)."""
    design = tmp_path / "design.toml"
    assert main(["solve", str(ROOT / "problems" / "jackdaw_orbit.toml"), "--json", "--out", str(design)]) == EXIT_OK
    solved = json.loads(capsys.readouterr().out)
    assert solved["status"] == "optimal"
    assert solved["perigee_altitude_m"] == pytest.approx(500_000, abs=1_000)
    assert solved["apogee_altitude_m"] == pytest.approx(500_000, abs=1_000)
    assert solved["inclination_deg"] == pytest.approx(97.5, abs=0.05)
    assert 1500.0 < sum(solved["losses_m_s"].values()) < 2500.0
    st = solved["steering"]
    assert st["pitch_table"] and st["insertion"]["kind"] == "restart"
    traj = tmp_path / "traj.csv"
    assert main(["fly", str(design), "--json", "--out", str(traj)]) == EXIT_OK
    flown = json.loads(capsys.readouterr().out)
    import csv

    rows = list(csv.DictReader(traj.open()))
    high = [r for r in rows if float(r["altitude above sea level [m]"]) > 300e3]
    assert high and all(r["Mach number [-]"] == "" for r in high)  # no air above the model's top: no Mach
    for k in ("perigee_altitude_m", "apogee_altitude_m", "inclination_deg", "max_dynamic_pressure_pa",
              "max_acceleration_m_s2"):
        assert flown[k] == solved[k], k
    # one note generator: the gravity-loss note of solve comes back from fly, quoting the stated T/W
    note = [w for w in solved["warnings"] if w.startswith("gravity loss")]
    assert note and note[0] in flown["warnings"] and "1.45 at lift-off" in note[0]


def test_solve_orbit_max_payload_for_a_gross_mass(tmp_path):
    """gross_mass with an orbit target gives the largest payload (issue requirement: the docs
    promise it); it grows with the gross mass (consistency check, no external source)."""
    data = json.loads(json.dumps(load_problem(ROOT / "problems" / "jackdaw_orbit.toml").raw))
    del data["mission"]["payload_mass"]
    payloads = []
    for g in (9000.0, 10000.0):
        data["mission"]["gross_mass"] = g
        r = solve(problem_from_dict(data, source="<max payload>"))
        assert r.success, r.message
        assert r.gross_mass_kg == pytest.approx(g, rel=1e-3)
        payloads.append(r.payload_mass_kg)
    assert 150.0 < payloads[0] < payloads[1]


def test_design_file_needs_a_flight_target(tmp_path, capsys):
    out = tmp_path / "d.toml"
    assert main(["solve", str(ROOT / "problems" / "jackdaw_three_stage.toml"), "--out", str(out)]) == EXIT_BAD_INPUT
    assert "design file" in capsys.readouterr().err
    assert not out.exists()


def test_cli_fly_impact_under_power_is_a_failed_flight(tmp_path, capsys):
    text = (ROOT / "problems" / "heron_as_built.toml").read_text().replace('thrust = "3000 N"', 'thrust = "400 N"')
    p = tmp_path / "weak.toml"
    p.write_text(text)
    assert main(["fly", str(p)]) == EXIT_FAILED
    out = capsys.readouterr().out
    assert "came back to the ground" in out and "nan" not in out


@pytest.mark.parametrize("name, hint", [("hobby_water_rocket.toml", "sizing hobby"),
                                        ("motors/demo_motors.toml", "motor list"),
                                        ("reference/curtis_three_stage.toml", "reference case")])
def test_cli_fly_other_file_kinds_get_one_line(name, hint, capsys):
    assert main(["fly", str(ROOT / "problems" / name)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and hint in err[0]


def test_ideal_methods_are_refused_for_flight_targets(capsys):
    """`--method slsqp` on an apogee problem is a one-line error (exit 2), not a silent switch."""
    from sizing.optimize.prepare import MSG_METHOD_NOT_FOR_FLIGHT

    assert main(["solve", str(APOGEE), "--method", "slsqp"]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and MSG_METHOD_NOT_FOR_FLIGHT in err[0]


def test_cli_sweep_writes_a_table_with_units(tmp_path, capsys):
    """`--sweep apogee=20km:30km:10km`: one solve per point, gross mass grows with the target
    (consistency check, no external source), CSV with units in the header and the caution."""
    import csv

    out = tmp_path / "sweep.csv"
    assert main(["solve", str(APOGEE), "--sweep", "apogee=20km:30km:10km", "--out", str(out)]) == EXIT_OK
    rows = list(csv.DictReader(out.open(encoding="utf-8")))
    pts = [r for r in rows if r.get("status") == "optimal"]
    assert [float(r["apogee [m]"]) for r in pts] == [20000.0, 30000.0]
    assert float(pts[0]["gross mass [kg]"]) < float(pts[1]["gross mass [kg]"])
    assert "Preliminary estimates only" in out.read_text()


def test_cli_sweep_bare_numbers_are_si():
    """On the command line a bare number is SI, as a plain number is in a file; units still convert."""
    from sizing.cli_sweep import parse_sweep

    assert parse_sweep("apogee=20000:30000:10000") == ("apogee", [20000.0, 30000.0])
    assert parse_sweep("apogee=20 km:30000:10km") == ("apogee", [20000.0, 30000.0])


@pytest.mark.parametrize("spec, text", [("colour=1:2:1", "KEY one of"), ("apogee=10km:20km", "START:STOP:STEP"),
                                        ("apogee=20km:10km:1km", "STOP >= START"),
                                        ("apogee=1m:100km:1m", "at most")])
def test_cli_sweep_bad_spec_is_one_line(spec, text, capsys):
    assert main(["solve", str(APOGEE), "--sweep", spec]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and text in err[0]


@pytest.mark.parametrize("name, limit", [("heron_apogee.toml", "1 kPa"), ("jackdaw_orbit.toml", "5 kPa")])
def test_unreachable_max_q_limit_is_named(name, limit, tmp_path, capsys):
    """A max-q limit below what the vehicle can fly is a failed sizing whose message names the key,
    the flown max-q and the limit (issue requirement: bad or unmeetable input is explained)."""
    text = (ROOT / "problems" / name).read_text().replace("[mission]", f"[mission]\nmax_dynamic_pressure = \"{limit}\"", 1)
    path = tmp_path / name
    path.write_text(text)
    assert main(["solve", str(path)]) == EXIT_FAILED
    first = capsys.readouterr().out.splitlines()[0]
    assert "mission.max_dynamic_pressure" in first and f"{limit.split()[0]},000 Pa" in first, first


def test_gross_mass_cap_with_flight_targets(capsys):
    """A max_gross_mass below the lightest design fails with the cap named, the design kept as the best
    reachable; a cap above it changes nothing (for a minimum-gross-mass objective the cap binds only by
    making the problem infeasible: consistency check, no external source)."""
    free = solve(load_problem(APOGEE))
    data = json.loads(json.dumps(load_problem(APOGEE).raw))
    data["mission"]["max_gross_mass"] = 0.9 * free.gross_mass_kg
    low = solve(problem_from_dict(data, source="<cap>"))
    assert not low.success and "mission.max_gross_mass" in low.message and f"{free.gross_mass_kg:,.0f} kg" in low.message
    data["mission"]["max_gross_mass"] = 1.1 * free.gross_mass_kg
    assert solve(problem_from_dict(data, source="<cap>")).gross_mass_kg == pytest.approx(free.gross_mass_kg, rel=1e-12)
    orbit = json.loads(json.dumps(load_problem(ROOT / "problems" / "jackdaw_orbit.toml").raw))
    orbit["mission"]["max_gross_mass"] = 5000.0
    r = solve(problem_from_dict(orbit, source="<orbit cap>"))
    assert not r.success and "mission.max_gross_mass: 5,000 kg is below" in r.message


def test_fly_notes_high_drag_and_max_q(capsys):
    """The as-built demo loses 45 % of its ideal delta-v to drag at 175 kPa max-q: both get a review note
    (thresholds: common practice, no source)."""
    assert main(["fly", str(ROOT / "problems" / "heron_as_built.toml"), "--json"]) == EXIT_OK
    w = json.loads(capsys.readouterr().out)["warnings"]
    assert any(x.startswith("drag loss") and "45 %" in x for x in w), w
    assert any(x.startswith("max-q 175 kPa") for x in w), w


def test_method_refusals_name_the_flag_or_key(tmp_path, capsys):
    """A method that does not apply names where it was asked for: the --method flag or solver.method
    in the file (one line, exit 2)."""
    orbit = ROOT / "problems" / "jackdaw_orbit.toml"
    assert main(["solve", str(orbit), "--method", "slsqp"]) == EXIT_BAD_INPUT
    assert capsys.readouterr().err.startswith("error: --method: methods")
    path = tmp_path / "m.toml"
    path.write_text(orbit.read_text() + '\n[solver]\nmethod = "slsqp"\n')
    assert main(["solve", str(path)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert err.startswith(f"error: {path}: solver.method: methods") and err.count("\n") == 1


def test_unknown_steering_key_lists_the_steering_keys(tmp_path, capsys):
    path = tmp_path / "s.toml"
    path.write_text((ROOT / "problems" / "jackdaw_orbit.toml").read_text() + "\n[steering]\nfoo = 1\n")
    assert main(["check", str(path)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert "steering.foo: unknown key" in err and "nodes_per_stage" in err and "mission" not in err


def test_sweep_names_a_point_heavier_than_a_harder_one():
    """A higher orbit can only cost gross mass (the design for it, re-steered, reaches the lower
    one): a heavier point below a lighter one is named as a local optimum (consistency check, no
    external source); a monotone sweep and a key that does not order the targets give no note."""
    from sizing.cli_sweep import local_optimum_notes

    def rows(masses):
        return [{"orbit_altitude [m]": 3e5 + 5e4 * k, "status": "optimal", "gross mass [kg]": m}
                for k, m in enumerate(masses)]

    notes = local_optimum_notes("orbit_altitude", rows([7626.2, 7598.4, 7684.2]))
    assert len(notes) == 1 and "300,000 m needs 7,626.2 kg" in notes[0] and "350,000 m only 7,598.4" in notes[0]
    assert local_optimum_notes("orbit_altitude", rows([7500.0, 7598.4, 7684.2])) == []
    assert local_optimum_notes("inclination", [{"inclination [deg]": 1.0, "status": "optimal",
                                                "gross mass [kg]": 2.0}]) == []


@pytest.mark.slow
def test_fly_names_the_programme_when_a_variant_reenters(tmp_path, capsys):
    """The half-orbit-coast demo design with 1 % less first-stage thrust climbs above 100 km and
    re-enters on its fixed programme: `sizing fly` says so and gives no loss or max-q notes drawn
    from the re-entry (consistency check, no external source; 100 km is the conventional edge of
    space)."""
    import re

    design = tmp_path / "design.toml"
    assert main(["solve", str(ROOT / "problems" / "jackdaw_orbit.toml"), "--out", str(design)]) == EXIT_OK
    text = design.read_text()
    m = re.search(r"(?m)^thrust = ([0-9.e+]+)$", text)  # the first stage's thrust comes first
    weak = tmp_path / "weak.toml"
    weak.write_text(text[:m.start(1)] + repr(0.99 * float(m.group(1))) + text[m.end(1):])
    capsys.readouterr()
    assert main(["fly", str(weak), "--json"]) == EXIT_FAILED  # a failed flight
    flown = json.loads(capsys.readouterr().out)
    notes = flown["warnings"]
    assert any("fixed steering programme does not suit this vehicle" in n for n in notes)
    assert not any(n.startswith(("drag loss", "max-q", "gravity loss")) for n in notes)
