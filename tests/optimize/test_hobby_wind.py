"""The ascent of a hobby stack in wind: weathercocking, apogee loss and shift, landing points, outputs."""

from __future__ import annotations

import json
import math
import tomllib
from pathlib import Path

import pytest

from sizing.cli import EXIT_OK, main
from sizing.optimize.hobby import build_motor_vehicle
from sizing.optimize.hobby_problem import _stack_stages, solve_hobby
from sizing.optimize.hobby_safety import (
    ASCENT_FLIGHTS,
    ascent_in_wind,
    build_stack,
    rail_exit_angle_of_attack_deg,
    stack_configurations,
)
from sizing.physics.airframe import configuration
from sizing.physics.vehicle import LaunchSite
from sizing.physics.wind import WindProfile
from sizing.problem.hobby import hobby_problem_from_dict
from sizing.report.flight_safety import ascent_rows, ground_plan_svg, safety_sheet_names

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "problems" / "hobby_motor_two_stage.toml"


def _problem(changes: dict | None = None):
    d = tomllib.loads(DEMO.read_text(encoding="utf-8"))
    for key, value in (changes or {}).items():
        d["launch"][key] = value
    return hobby_problem_from_dict(d, source="tern.toml", base_dir=DEMO.parent)


@pytest.fixture(scope="module")
def demo_result():
    return solve_hobby(_problem())


def test_rail_exit_angle_of_attack_is_the_velocity_triangle():
    """Vector addition of velocities: leaving a rail tilted t from the vertical at speed V with a
    horizontal wind w in the rail's plane, tan(alpha) = w cos t / (V + w sin t) with the rail tilted into
    the wind and w cos t / (V - w sin t) tilted with it; a vertical rail gives atan(w / V)."""
    w = WindProfile("constant", speed_m_s=5.0, direction_from_deg=270.0)  # air moves east
    v, t = 20.0, math.radians(8.0)
    assert rail_exit_angle_of_attack_deg(LaunchSite(rail_length_m=1.0), v, w) == pytest.approx(
        math.degrees(math.atan(5.0 / v)), rel=1e-12)
    into = LaunchSite(rail_length_m=1.0, rail_angle_deg=8.0, azimuth_deg=270.0)
    with_ = LaunchSite(rail_length_m=1.0, rail_angle_deg=8.0, azimuth_deg=90.0)
    assert rail_exit_angle_of_attack_deg(into, v, w) == pytest.approx(
        math.degrees(math.atan(5.0 * math.cos(t) / (v + 5.0 * math.sin(t)))), rel=1e-12)
    assert rail_exit_angle_of_attack_deg(with_, v, w) == pytest.approx(
        math.degrees(math.atan(5.0 * math.cos(t) / (v - 5.0 * math.sin(t)))), rel=1e-12)


def test_demo_in_wind_reports_three_flights_and_lands_from_the_wind_apogee(demo_result):
    h = demo_result.flight["hobby"]
    w = h["wind"]
    assert [f["flight"] for f in w["flights"]] == list(ASCENT_FLIGHTS)
    calm, windy, limit = w["flights"]
    assert calm["apogee_change_m"] == 0.0 and calm["apogee_shift_m"] == 0.0
    assert w["apogee_loss_m"] == pytest.approx(calm["apogee_m"] - windy["apogee_m"])
    assert windy["apogee_shift_upwind_m"] > 0 and limit["apogee_shift_upwind_m"] > windy["apogee_shift_upwind_m"]
    assert math.isnan(limit["max_angle_of_attack_deg"]) and windy["max_angle_of_attack_deg"] > 1.0
    sus = next(r for r in h["recovery"] if r["stage"] == "sustainer")
    # the top stage comes down from the apogee flown in the stated wind
    assert (sus["apex_east_m"], sus["apex_north_m"]) == (windy["apogee_east_m"], windy["apogee_north_m"])
    assert sus["deploy_height_m"] == pytest.approx(windy["apogee_m"])
    for r in h["recovery"]:
        e, n = r["apex_east_m"] + sum(l["drift_east_m"] for l in r["legs"]), \
            r["apex_north_m"] + sum(l["drift_north_m"] for l in r["legs"])
        assert (r["landing_east_m"], r["landing_north_m"]) == pytest.approx((e, n), abs=1e-9)
        assert r["landing_distance_m"] == pytest.approx(math.hypot(e, n))
    assert any("turns into the wind" in n for n in demo_result.warnings)


def test_higher_static_margin_turns_the_stack_further_into_the_wind():
    """Weathercocking trend (issue 12 check) on the demo stack: bigger fins (CP further aft, higher margin)
    at the same vehicle move the apogee further towards the wind's source in a constant 7 m/s wind;
    margins measured at rail exit increase with the fin span."""
    p = _problem({"wind_profile": "constant", "wind_speed": "7 m/s"})
    motors = {m.name: m for m in p.motors}
    combo = (motors["Osprey I440"], motors["Finch F52"])
    vehicle = build_motor_vehicle(combo, _stack_stages(p), payload_mass_kg=p.payload_mass_kg)
    stack = build_stack(p, combo)
    shifts, margins = [], []
    for k in (0.7, 1.0, 1.4):
        s = stack
        for st in stack.stages:
            s = s.with_fins(st.name, st.fins.scaled(k))
        configs = tuple(configuration(s, i) for i in range(len(s.stages)))
        margins.append(configs[0].static_margin_cal(0.1, configs[0].full_mass_kg))
        part, _ = ascent_in_wind(p, vehicle, configs, p.wind)
        shifts.append(part["apogee_shift_upwind_m"])
        limit = part["zero_lift_apogee_shift_upwind_m"]
    assert margins[0] < margins[1] < margins[2]
    assert 0 < shifts[0] < shifts[1] < shifts[2] < limit


def test_calm_problem_has_no_ascent_table(tmp_path):
    d = tomllib.loads(DEMO.read_text(encoding="utf-8"))
    for k in ("wind_profile", "wind_speed", "wind_direction"):
        d["launch"].pop(k)
    res = solve_hobby(hobby_problem_from_dict(d, source="tern.toml", base_dir=DEMO.parent))
    assert "flights" not in res.flight["hobby"]["wind"]
    assert ascent_rows(res)[2] == [] and ground_plan_svg(res) == ""
    assert "ascent in wind" not in safety_sheet_names(res)


def test_cli_outputs_carry_the_ascent_in_wind(demo_result, tmp_path, capsys):
    title, header, rows = ascent_rows(demo_result, numeric=True)
    assert all("[" in hd for hd in header[1:]) and len(rows) == 3
    assert rows[1][header.index("apogee moved towards the wind's source [m]")] > 0
    assert main(["hobby", str(DEMO), "--json"]) == EXIT_OK
    data = json.loads(capsys.readouterr().out)
    assert data["hobby"]["wind"]["flights"][1]["flight"] == "stated wind"
    csv_path, xlsx_path, page = tmp_path / "t.csv", tmp_path / "t.xlsx", tmp_path / "t.html"
    for path in (csv_path, xlsx_path, page):
        assert main(["hobby", str(DEMO), "--out", str(path)]) == EXIT_OK
    text = csv_path.read_text(encoding="utf-8")
    assert "Ascent in wind" in text and "apogee moved towards the wind's source [m]" in text
    from openpyxl import load_workbook

    assert load_workbook(xlsx_path).sheetnames[-4:] == ["stability", "ascent in wind", "ejection timing",
                                                        "recovery"]
    html = page.read_text(encoding="utf-8")
    assert "Plan view" in html and "zero-lift" in html and "not clearance to fly" in html
    out = capsys.readouterr().out
    assert "Ascent in wind" in out


def test_stack_configurations_match_the_vehicle_masses():
    """The stability configurations the body-axis flight reads carry the vehicle's masses (ballast too)."""
    p = _problem()
    motors = {m.name: m for m in p.motors}
    combo = (motors["Osprey I440"], motors["Finch F52"])
    vehicle = build_motor_vehicle(combo, _stack_stages(p), payload_mass_kg=p.payload_mass_kg, ballast_mass_kg=0.03)
    configs = stack_configurations(p, combo, ballast_kg=0.03)
    for i, c in enumerate(configs):
        assert c.full_mass_kg == pytest.approx(vehicle.ignition_mass_kg(i), rel=1e-12)
        m, m1, j, xp, jp = c.mass_moments()
        assert m == pytest.approx(c.burnout_mass_kg) and m1 / m == pytest.approx(c.x_cg_m(c.burnout_mass_kg))
        mass = 0.5 * (c.full_mass_kg + c.burnout_mass_kg)
        mp = mass - m
        assert j + mp * jp - (m1 + mp * xp) ** 2 / mass == pytest.approx(c.pitch_inertia_kg_m2(mass), rel=1e-9)


def test_wind_without_geometry_is_named_in_a_review_note():
    from sizing.optimize.hobby_problem import MSG_WIND_NEEDS_GEOMETRY

    d = tomllib.loads(DEMO.read_text(encoding="utf-8"))
    for st in d["stage"]:
        st.pop("geometry"), st.pop("recovery")
    d["mission"].pop("payload_position")
    res = solve_hobby(hobby_problem_from_dict(d, source="tern.toml", base_dir=DEMO.parent))
    assert res.success
    assert any(w.startswith(MSG_WIND_NEEDS_GEOMETRY) for w in res.warnings)
    assert "wind" not in res.flight["hobby"]
