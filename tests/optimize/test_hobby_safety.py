"""Stability in the motor-stack search and the flight-safety part of hobby results."""

from __future__ import annotations

import json
import math
import tomllib
from pathlib import Path

import pytest

from sizing.cli import EXIT_BAD_INPUT, EXIT_OK, main
from sizing.optimize.hobby_problem import solve_hobby
from sizing.optimize.hobby_safety import (
    build_stack,
    geometry_drag_curves,
    stability_ballast,
    stack_configurations,
)
from sizing.physics.airframe import PointMass, configuration
from sizing.problem.hobby import hobby_problem_from_dict
from sizing.result import CAUTION

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "problems" / "hobby_motor_two_stage.toml"


def _demo(changes: dict | None = None) -> dict:
    d = tomllib.loads(DEMO.read_text(encoding="utf-8"))
    for (table, key), value in (changes or {}).items():
        d[table][key] = value
    return d


def _problem(d: dict):
    return hobby_problem_from_dict(d, source="tern.toml", base_dir=DEMO.parent)


def _small_fins(d: dict, span: str = "25 mm") -> dict:
    for st in d["stage"]:
        st["geometry"]["fin_span"] = span
    return d


@pytest.fixture(scope="module")
def demo_result():
    return solve_hobby(_problem(_demo()))


def test_stability_ballast_meets_the_margin_by_the_lever_rule():
    p = _problem(_small_fins(_demo()))
    motors = {m.name: m for m in p.motors}
    combo = (motors["Egret H230"], motors["Finch F52"])
    b = stability_ballast(p, combo)
    assert 0 < b < math.inf
    margins = [c.static_margin_cal(0.0, c.full_mass_kg) for c in stack_configurations(p, combo, ballast_kg=b)]
    assert min(margins) == pytest.approx(p.min_static_margin_cal, abs=1e-9)
    assert all(m >= p.min_static_margin_cal - 1e-9 for m in margins)


def test_search_rejects_unstable_stacks_when_ballast_is_not_allowed():
    d = _small_fins(_demo({("hobby", "stability_fix"): "none"}), "10 mm")
    res = solve_hobby(_problem(d))
    assert not res.success
    assert res.flight["hobby"]["rejected"]["unstable"] == 12  # every combination of the demo list


def test_search_ballasts_a_marginal_stack_and_the_rail_exit_margin_holds():
    p = _problem(_small_fins(_demo()))
    res = solve_hobby(p)
    assert res.success, res.message
    h = res.flight["hobby"]
    assert h["ballast_mass_kg"] > 0
    first = h["stability"]["phases"][0]
    assert first["event"] == "rail exit"
    assert first["static_margin_cal"] >= p.min_static_margin_cal - 1e-6
    ign = [r for r in h["stability"]["phases"] if r["event"] == "ignition"]
    assert all(r["static_margin_cal"] >= p.min_static_margin_cal - 1e-6 for r in ign)


def test_demo_result_carries_stability_ejection_recovery(demo_result):
    h = demo_result.flight["hobby"]
    assert h["drag_source"] == ["geometry", "geometry"]
    assert [r["event"] for r in h["stability"]["phases"]] == ["rail exit", "burnout", "ignition", "burnout"]
    assert {e["stage"] for e in h["ejection"]} == {"booster", "sustainer"}
    sus = next(e for e in h["ejection"] if e["stage"] == "sustainer")
    windy = h["wind"]["flights"][1]  # the ejection timing follows the flight in the stated wind
    assert windy["flight"] == "stated wind"
    assert sus["coast_to_apogee_s"] == pytest.approx(windy["time_to_apogee_s"] - sus["burnout_time_s"])
    rec = {r["stage"]: r for r in h["recovery"]}
    assert rec["sustainer"]["landing_rate_m_s"] == pytest.approx(5.0, rel=1e-6)
    assert [c["role"] for c in rec["sustainer"]["canopies"]] == ["drogue", "main"]
    assert rec["booster"]["deploy_height_m"] < rec["sustainer"]["deploy_height_m"]
    assert any("weathercocking" in w or "calm air" in w for w in demo_result.warnings)


def test_constant_wind_drift_is_descent_time_times_wind_speed():
    """drift = descent time x wind speed for a constant wind (whole hobby path)."""
    d = _demo()
    d["launch"]["wind_profile"] = "constant"
    d["launch"]["wind_speed"] = "6 m/s"
    res = solve_hobby(_problem(d))
    for r in res.flight["hobby"]["recovery"]:
        assert r["drift_m"] == pytest.approx(6.0 * r["descent_time_s"], rel=1e-9)


def test_geometry_drag_is_in_the_hobby_range_and_refers_to_the_vehicle_area():
    """check-values.md section 5 (from memory): subsonic C_D 0.3-0.6 for finned hobby rockets."""
    p = _problem(_demo())
    for c in geometry_drag_curves(p):
        assert 0.3 <= c.cd_at(0.3) <= 0.6


def test_build_stack_places_payload_ballast_and_motors():
    p = _problem(_demo())
    motors = {m.name: m for m in p.motors}
    combo = (motors["Egret H230"], motors["Finch F52"])
    st = build_stack(p, combo, ballast_kg=0.05)
    assert [m.name for m in st.nose_masses] == ["payload", "ballast"]
    assert st.nose_masses[0].x_m == pytest.approx(0.23)
    assert st.nose_masses[1].x_m == pytest.approx(0.13)  # half the 260 mm nose
    f52 = combo[1]
    case = next(m for m in st.stages[1].masses if m.name == "motor case")
    assert case.x_m == pytest.approx(st.stages[1].length_m - f52.length_m / 2)
    full = configuration(st, 0)
    m = sum(pm.mass_kg for pm in st.nose_masses) + sum(pm.mass_kg for s in st.stages for pm in s.masses) \
        + sum(s.propellant_mass_kg for s in st.stages)
    assert full.full_mass_kg == pytest.approx(m)
    assert isinstance(st.nose_masses[1], PointMass)


def test_cli_writes_html_and_svg_sketch_with_caution(tmp_path, capsys):
    html_path, svg_path = tmp_path / "tern.html", tmp_path / "tern.svg"
    assert main(["hobby", str(DEMO), "--out", str(html_path)]) == EXIT_OK
    assert main(["hobby", str(DEMO), "--out", str(svg_path)]) == EXIT_OK
    page = html_path.read_text(encoding="utf-8")
    assert "<svg" in page and "Static stability" in page and "Recovery" in page and "Ejection timing" in page
    assert "not clearance to fly" in page
    svg = svg_path.read_text(encoding="utf-8")
    assert svg.startswith("<svg") and "centre of pressure" in svg and "not clearance to fly" in svg
    out = capsys.readouterr().out
    assert "Static stability" in out and "static margin" in out and "Recovery" in out


def test_cli_sketch_needs_geometry(tmp_path, capsys):
    water = ROOT / "problems" / "hobby_water_rocket.toml"
    assert main(["hobby", str(water), "--out", str(tmp_path / "w.svg")]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert "needs a motor stack with [stage.geometry]" in err and "Traceback" not in err
    assert not (tmp_path / "w.svg").exists()


def test_cli_json_and_csv_carry_the_safety_figures(tmp_path, capsys):
    assert main(["hobby", str(DEMO), "--json"]) == EXIT_OK
    data = json.loads(capsys.readouterr().out)
    assert data["hobby"]["stability"]["phases"][0]["static_margin_cal"] > 1.0
    assert data["hobby"]["limits"]["min_static_margin_cal"] == 1.0
    assert data["caution"] == CAUTION
    csv_path = tmp_path / "t.csv"
    assert main(["hobby", str(DEMO), "--out", str(csv_path)]) == EXIT_OK
    text = csv_path.read_text(encoding="utf-8")
    assert "static margin [cal]" in text and "descent time [s]" in text and "recommended delay [s]" in text
