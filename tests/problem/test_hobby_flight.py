"""Loading the flight-safety keys of hobby motor problems: geometry, recovery, wind, stability rules.

Each error branch has one test; the message names the file, the field, the value and what is allowed.
"""

from __future__ import annotations

import copy
import re
import tomllib
from pathlib import Path

import pytest

from sizing.errors import MSG_UNKNOWN_KEY, ProblemDefinitionError
from sizing.problem.hobby import MSG_MOTORS_ONLY, hobby_problem_from_dict
from sizing.problem.hobby_flight import (
    MSG_BOATTAIL_KEYS,
    MSG_DUAL_ONLY,
    MSG_FIN_KEYS,
    MSG_GEOMETRY_ALL_OR_NONE,
    MSG_GEOMETRY_NEEDED,
    MSG_MOTOR_LENGTH,
    MSG_NOSE_REQUIRED,
    MSG_NOSE_TOP_ONLY,
    MSG_PARTS_MASS,
    MSG_TRANSITION_REQUIRED,
    MSG_WIND_TABLE,
)

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "problems" / "hobby_motor_two_stage.toml"
WATER = ROOT / "problems" / "hobby_water_rocket.toml"


def _demo() -> dict:
    return tomllib.loads(DEMO.read_text(encoding="utf-8"))


def _load(data: dict, source: str = "tern.toml"):
    return hobby_problem_from_dict(data, source=source, base_dir=DEMO.parent)


def _fault(data: dict, *pieces: str) -> str:
    with pytest.raises(ProblemDefinitionError) as info:
        _load(data)
    text = str(info.value)
    assert "tern.toml" in text
    for p in pieces:
        assert re.search(re.escape(p), text), (p, text)
    return text


def test_demo_geometry_recovery_and_wind_load_in_si():
    p = _load(_demo())
    assert p.has_geometry
    boo, sus = p.motor_stages
    assert sus.geometry.nose_shape == "ogive" and sus.geometry.nose_length_m == pytest.approx(0.26)
    assert sus.geometry.length_m == pytest.approx(0.96)
    assert sus.geometry.parts[0].mass_kg == pytest.approx(0.07)
    assert boo.recovery.device == "streamer" and boo.recovery.descent_rate_m_s == pytest.approx(12.0)
    assert sus.recovery.device == "dual" and sus.recovery.main_deploy_height_m == pytest.approx(150.0)
    assert p.wind.kind == "power_law" and p.wind.speed_m_s == pytest.approx(4.0)
    assert p.payload_position_m == pytest.approx(0.23)
    assert p.min_static_margin_cal == 1.0 and p.stability_fix == "ballast"


def test_geometry_on_some_stages_only():
    d = _demo()
    del d["stage"][0]["geometry"]
    _fault(d, "stage[1] (booster).geometry", MSG_GEOMETRY_ALL_OR_NONE)


def test_nose_on_a_lower_stage():
    d = _demo()
    d["stage"][0]["geometry"]["nose_shape"] = "ogive"
    d["stage"][0]["geometry"]["nose_length"] = "200 mm"
    _fault(d, "stage[1] (booster).geometry.nose_length", MSG_NOSE_TOP_ONLY)


def test_top_stage_without_nose():
    d = _demo()
    del d["stage"][1]["geometry"]["nose_length"]
    _fault(d, "stage[2] (sustainer).geometry", MSG_NOSE_REQUIRED)


def test_nose_shape_not_known():
    d = _demo()
    d["stage"][1]["geometry"]["nose_shape"] = "bullet"
    _fault(d, "stage[2] (sustainer).geometry.nose_shape", "bullet")


def test_transition_required_where_diameters_differ():
    d = _demo()
    d["stage"][0]["diameter"] = "76 mm"
    _fault(d, "stage[1] (booster).geometry.transition_length", MSG_TRANSITION_REQUIRED)
    d["stage"][0]["geometry"]["transition_length"] = "40 mm"
    p = _load(d)
    assert p.motor_stages[0].geometry.transition_length_m == pytest.approx(0.04)


def test_transition_not_on_the_top_stage():
    d = _demo()
    d["stage"][1]["geometry"]["transition_length"] = "40 mm"
    _fault(d, "stage[2] (sustainer).geometry.transition_length", "leave it out")


def test_fin_keys_go_together():
    d = _demo()
    del d["stage"][0]["geometry"]["fin_thickness"]
    _fault(d, "stage[1] (booster).geometry", MSG_FIN_KEYS, "missing fin_thickness")


def test_fin_count_range():
    d = _demo()
    d["stage"][0]["geometry"]["fin_count"] = 9
    _fault(d, "stage[1] (booster).geometry.fin_count", "from 2 to 8", "Got 9")


def test_boattail_keys_go_together():
    d = _demo()
    d["stage"][0]["geometry"]["boattail_length"] = "30 mm"
    _fault(d, "stage[1] (booster).geometry", MSG_BOATTAIL_KEYS)


def test_airframe_cg_off_the_stage():
    d = _demo()
    d["stage"][0]["geometry"]["airframe_cg"] = "2 m"
    _fault(d, "stage[1] (booster).geometry.airframe_cg", "must lie on the stage", "'2 m'")


def test_fins_longer_than_the_stage():
    d = _demo()
    d["stage"][0]["geometry"]["fin_offset"] = "400 mm"
    _fault(d, "stage[1] (booster).geometry.fin_root_chord", "must fit on the stage")


def test_negative_length_is_refused():
    d = _demo()
    d["stage"][0]["geometry"]["body_length"] = "-5 mm"
    _fault(d, "stage[1] (booster).geometry.body_length", "must be > 0", "'-5 mm'")


def test_unknown_geometry_key_lists_the_allowed_keys():
    d = _demo()
    d["stage"][0]["geometry"]["fin_hight"] = "5 mm"
    _fault(d, "stage[1] (booster).geometry.fin_hight", MSG_UNKNOWN_KEY, "fin_span")


@pytest.mark.parametrize("part, message", [
    ({"name": "bay", "mass": "10 g", "position": "1 m", "colour": "red"}, "unknown key"),
    ({"name": "bay", "position": "1 m"}, "mass and position are required"),
    ({"name": 3, "mass": "10 g", "position": "0.1 m"}, "must be a string"),
    ({"name": "bay", "mass": "2 kg", "position": "0.1 m"}, MSG_PARTS_MASS),
])
def test_parts_errors(part, message):
    d = _demo()
    d["stage"][0]["geometry"]["parts"] = [part]
    _fault(d, "stage[1] (booster).geometry.parts", message)


def test_motor_without_length_with_geometry():
    d = _demo()
    del d["hobby"]["motors"]
    d["motor"] = [{"name": "Plain G80", "total_impulse": 120, "propellant_mass": 0.06, "loaded_mass": 0.12,
                   "burn_time": 1.5, "diameter": "38 mm"},
                  {"name": "Plain F40", "total_impulse": 60, "propellant_mass": 0.03, "loaded_mass": 0.07,
                   "burn_time": 1.5, "diameter": "29 mm", "length": "120 mm"}]
    _fault(d, "stage[1] (booster).geometry", MSG_MOTOR_LENGTH, "Plain G80")


def test_drogue_keys_need_dual_deployment():
    d = _demo()
    d["stage"][0]["recovery"]["main_deploy_height"] = "100 m"
    _fault(d, "stage[1] (booster).recovery.main_deploy_height", MSG_DUAL_ONLY)


def test_drogue_must_be_faster_than_main():
    d = _demo()
    d["stage"][1]["recovery"]["drogue_descent_rate"] = "4 m/s"
    _fault(d, "stage[2] (sustainer).recovery.drogue_descent_rate", "must be faster than descent_rate")


def test_canopy_cd_range():
    d = _demo()
    d["stage"][1]["recovery"]["canopy_cd"] = 5
    _fault(d, "stage[2] (sustainer).recovery.canopy_cd", "must be in (0, 3]", "Got 5")


def test_recovery_device_not_known():
    d = _demo()
    d["stage"][1]["recovery"]["device"] = "glider"
    _fault(d, "stage[2] (sustainer).recovery.device", "glider")


def test_wind_profile_not_known():
    d = _demo()
    d["launch"]["wind_profile"] = "gusty"
    _fault(d, "launch.wind_profile", "constant, power_law, table", "'gusty'")


def test_wind_direction_range():
    d = _demo()
    d["launch"]["wind_direction"] = "400 deg"
    _fault(d, "launch.wind_direction", "[0, 360)", "'400 deg'")


def test_wind_table_shape_and_conflicts():
    d = _demo()
    d["launch"]["wind_profile"] = "table"
    _fault(d, "launch.wind_table", "takes wind_table (and no wind_speed)")
    del d["launch"]["wind_speed"]
    d["launch"]["wind_table"] = [[0, 3], [100, 5, 270]]
    _fault(d, "launch.wind_table", MSG_WIND_TABLE)
    d["launch"]["wind_table"] = [[100, 3, 270], [10, 5, 270]]
    _fault(d, "launch.wind_table", MSG_WIND_TABLE)
    d["launch"]["wind_table"] = [[0, 3, 270], [300, 6, 260]]
    assert _load(d).wind.kind == "table"


def test_wind_table_with_a_constant_profile():
    d = _demo()
    d["launch"]["wind_profile"] = "constant"
    d["launch"]["wind_table"] = [[0, 3, 270]]
    _fault(d, "launch.wind_table", "applies to wind_profile = 'table' only")


def test_power_law_keys_with_a_constant_profile():
    d = _demo()
    d["launch"]["wind_profile"] = "constant"
    d["launch"]["wind_exponent"] = 0.2
    _fault(d, "launch.wind_exponent", "'power_law' only")


def test_stability_keys_need_geometry():
    d = _demo()
    for st in d["stage"]:
        del st["geometry"]
    d["hobby"]["min_static_margin"] = 1.5
    _fault(d, "hobby.min_static_margin", MSG_GEOMETRY_NEEDED, "1.5")


def test_min_static_margin_not_negative():
    d = _demo()
    d["hobby"]["min_static_margin"] = -1
    _fault(d, "hobby.min_static_margin", "must be >= 0 calibers")


def test_stability_fix_values():
    d = _demo()
    d["hobby"]["stability_fix"] = "fins"
    _fault(d, "hobby.stability_fix", "'ballast'", "'fins'")


def test_flight_safety_keys_are_motor_only():
    d = tomllib.loads(WATER.read_text(encoding="utf-8"))
    d = copy.deepcopy(d)
    d.setdefault("launch", {})["wind_speed"] = "3 m/s"
    d["hobby"]["min_static_margin"] = 1
    with pytest.raises(ProblemDefinitionError) as info:
        hobby_problem_from_dict(d, source="water.toml", base_dir=WATER.parent)
    text = str(info.value)
    assert f"launch.wind_speed: {MSG_MOTORS_ONLY}" in text and f"hobby.min_static_margin: {MSG_MOTORS_ONLY}" in text
