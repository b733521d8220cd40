"""Problem-file keys of the stage model: each error branch gives one line naming file, field, value."""

from __future__ import annotations

import copy
import re

import pytest

from sizing.cli import EXIT_BAD_INPUT, main
from sizing.errors import MSG_UNKNOWN_KEY, ProblemDefinitionError
from sizing.problem.load import problem_from_dict
from sizing.problem.stage_load import (
    MSG_ENTRY_MISSING,
    MSG_KIND_MISMATCH,
    MSG_LOSS_NEEDS_THRUST,
    MSG_NEEDS_MATERIAL,
    MSG_NOT_IN_MATERIAL_TABLE,
    MSG_NOT_IN_PROPELLANT_TABLE,
    MSG_STRUCTURE_AND_COEFFICIENT,
    MSG_STRUCTURE_FLIGHT,
    MSG_STRUCTURE_NEEDS_DIAMETER,
    MSG_STRUCTURE_NEEDS_PROPELLANT,
    MSG_STRUCTURE_NEEDS_THRUST,
    MSG_TW_BOUNDS,
    MSG_UNKNOWN_ITEM,
    MSG_UNKNOWN_LIKE,
)

BASE = {
    "mission": {"payload_mass": 200.0, "delta_v": 8000.0},
    "stage": [
        {"name": "low", "propellant": "lox-rp1", "diameter": 1.8, "thrust_to_weight": 1.3, "structure": {}},
        {"name": "up", "propellant": "lox-ch4", "diameter": 1.8, "min_thrust_to_weight": 0.5,
         "max_thrust_to_weight": 2.0, "structure": {}},
    ],
}


def _faults(edit) -> list[str]:
    data = copy.deepcopy(BASE)
    edit(data)
    with pytest.raises(ProblemDefinitionError) as info:
        problem_from_dict(data, source="t.toml")
    return list(info.value.faults)


def _one(edit, *parts):
    faults = _faults(edit)
    assert any(all(p in f for p in parts) for f in faults), faults


def test_base_loads_with_models_and_table_isp():
    p = problem_from_dict(copy.deepcopy(BASE))
    low, up = p.stages
    assert low.has_mass_model and up.has_mass_model and p.has_stage_models
    assert low.isp_s == pytest.approx(low.propellant.isp_vac_s, rel=1e-12)
    assert up.mass_model.interstage_length_m == 0.0 and low.mass_model.interstage_length_m == pytest.approx(0.9)


def test_unknown_propellant():
    _one(lambda d: d["stage"][0].update(propellant="lox-kero"), "stage[1] (low).propellant",
         MSG_NOT_IN_PROPELLANT_TABLE, "'lox-kero'", "lox-rp1")


def test_unknown_material():
    _one(lambda d: d["stage"][0]["structure"].update(material="unobtainium"), "structure.material",
         MSG_NOT_IN_MATERIAL_TABLE, "'unobtainium'", "al2219-t87")


def test_structure_needs_propellant():
    _one(lambda d: (d["stage"][0].pop("propellant"), d["stage"][0].update(isp=300)), MSG_STRUCTURE_NEEDS_PROPELLANT)


def test_structure_needs_diameter():
    _one(lambda d: d["stage"][0].pop("diameter"), MSG_STRUCTURE_NEEDS_DIAMETER)


def test_structure_and_coefficient_conflict():
    _one(lambda d: d["stage"][0].update(structural_coefficient=0.1), MSG_STRUCTURE_AND_COEFFICIENT)


def test_structure_needs_thrust():
    _one(lambda d: d["stage"][0].pop("thrust_to_weight"), MSG_STRUCTURE_NEEDS_THRUST)


def test_tw_bounds_and_fixed_tw_conflict():
    _one(lambda d: d["stage"][1].update(thrust_to_weight=1.0), MSG_TW_BOUNDS)


def test_max_tw_needs_min():
    _one(lambda d: d["stage"][1].pop("min_thrust_to_weight"), "max_thrust_to_weight: needs min_thrust_to_weight")


def test_min_tw_above_max():
    _one(lambda d: d["stage"][1].update(min_thrust_to_weight=3.0), "must be <= max_thrust_to_weight", "Got 3.0")


def test_first_stage_min_tw_must_lift_off():
    def edit(d):
        d["stage"][0].pop("thrust_to_weight")
        d["stage"][0].update(min_thrust_to_weight=0.9)
    _one(edit, "min_thrust_to_weight: the first stage must lift off")


def test_pressure_vessel_needs_material():
    _one(lambda d: d["stage"][0]["structure"].update(tank="pressure_vessel"), "tank = 'pressure_vessel'",
         MSG_NEEDS_MATERIAL)


def test_solid_case_needs_material():
    def edit(d):
        d["stage"][0].update(propellant="apcp")
    _one(edit, "a solid motor case", MSG_NEEDS_MATERIAL)


def test_unknown_fixed_item():
    _one(lambda d: d["stage"][0]["structure"].update(fixed={"paint": 3.0}), "structure.fixed.paint",
         MSG_UNKNOWN_ITEM, "tanks")


def test_fixed_item_wrong_unit():
    _one(lambda d: d["stage"][0]["structure"].update(fixed={"other": "3 m"}), "structure.fixed.other",
         "wrong dimension")


def test_kind_mismatch():
    _one(lambda d: d["stage"][0]["structure"].update(kind="solid"), "structure.kind", MSG_KIND_MISMATCH,
         "'solid'")


def test_structure_with_flight_target_needs_fixed_thrust_to_weight():
    """The upper stage has thrust-to-weight bounds (a design variable): refused with a flight target;
    the lower stage, with a fixed thrust-to-weight, is accepted."""
    def edit(d):
        d["mission"].pop("delta_v")
        d["mission"]["apogee"] = 50000.0
    faults = _faults(edit)
    assert any("stage[2] (up).structure" in f and MSG_STRUCTURE_FLIGHT in f for f in faults), faults
    assert not any("(low).structure" in f and MSG_STRUCTURE_FLIGHT in f for f in faults), faults


def test_gravity_loss_needs_thrust():
    def edit(d):
        d["stage"][0].pop("structure")
        d["stage"][0].pop("thrust_to_weight")
        d["stage"][0].update(structural_coefficient=0.1, gravity_loss_factor=0.5)
    _one(edit, "gravity_loss_factor", MSG_LOSS_NEEDS_THRUST, "Got 0.5")


def test_gravity_loss_factor_range():
    _one(lambda d: d["stage"][0].update(gravity_loss_factor=1.5), "gravity_loss_factor: must be in [0, 1]",
         "Got 1.5")


def test_engine_count_positive():
    _one(lambda d: d["stage"][0].update(engine_count=0), "engine_count: must be >= 1", "Got 0")


def test_structure_value_out_of_range():
    _one(lambda d: d["stage"][0]["structure"].update(safety_factor=0.8), "structure.safety_factor: must be >= 1",
         "Got 0.8")


def test_structure_unknown_key_names_nearest():
    _one(lambda d: d["stage"][0]["structure"].update(ulage=0.05), "structure.ulage", MSG_UNKNOWN_KEY,
         "Did you mean 'ullage'?")


def test_propellant_table_entry_missing_key():
    _one(lambda d: d.update(propellant_table={"x": {"kind": "liquid", "fuel_density": 800.0}}),
         "propellant_table.x.isp_vac", MSG_ENTRY_MISSING)


def test_propellant_table_unknown_like():
    _one(lambda d: d.update(propellant_table={"x": {"like": "lox-kerosene"}}), "propellant_table.x.like",
         MSG_UNKNOWN_LIKE, "'lox-kerosene'")


def test_propellant_table_liquid_needs_oxidiser():
    entry = {"kind": "liquid", "fuel_density": 800.0, "chamber_pressure": 5e6, "expansion_ratio": 10.0,
             "isp_vac": 320.0, "isp_sea_level": 290.0, "characteristic_velocity": 1800.0, "gamma": 1.2}
    _one(lambda d: d.update(propellant_table={"x": entry}), "propellant_table.x: a liquid propellant needs")


def test_propellant_table_bad_value():
    _one(lambda d: d.update(propellant_table={"x": {"like": "lox-ch4", "mixture_ratio": -1}}),
         "propellant_table.x.mixture_ratio: must be >= 0", "Got -1")


def test_user_propellant_and_material_extend_the_tables():
    data = copy.deepcopy(BASE)
    data["propellant_table"] = {"lox-ch4-rich": {"like": "lox-ch4", "mixture_ratio": 3.0, "isp_vac": "330 s",
                                                 "source": "team hot-fire data"}}
    data["material_table"] = {"al7075": {"density": "2810 kg/m^3", "yield_strength": "503 MPa",
                                         "ultimate_strength": "572 MPa"}}
    data["stage"][1].update(propellant="lox-ch4-rich")
    data["stage"][1]["structure"].update(tank="pressure_vessel", material="al7075", tank_pressure="0.4 MPa")
    up = problem_from_dict(data).stages[1]
    assert up.propellant.mixture_ratio == 3.0 and up.propellant.fuel_density_kg_m3 == 422.4
    assert up.isp_s == pytest.approx(330.0)
    assert up.mass_model.material.ultimate_strength_pa == pytest.approx(572e6)
    assert up.mass_model.tank_pressure_pa == pytest.approx(4e5)


def test_cli_bad_stage_model_value_exit_code_and_one_line(tmp_path, capsys):
    p = tmp_path / "bad.toml"
    p.write_text('[mission]\npayload_mass = 100\ndelta_v = 6000\n[[stage]]\nname = "a"\npropellant = "lox-ch5"\n'
                 'diameter = 1.0\nthrust_to_weight = 1.5\n[stage.structure]\n')
    assert main(["solve", str(p)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and re.search(r"bad\.toml: stage\[1\] \(a\)\.propellant: is not in the propellant", err[0])
    assert "Traceback" not in err[0]
