"""Study-file validation: one clear line per fault, and case expansion."""

from __future__ import annotations

import copy
from pathlib import Path
import re

import numpy as np
import pytest

from sizing.errors import StudyDefinitionError
from sizing.study.spec import (
    MSG_AXIS_FORM,
    MSG_FIELD_PATH,
    MSG_SAMPLED_NEEDS_METHOD,
    MSG_UNKNOWN_PROPELLANT,
    MSG_UNKNOWN_STAGE,
    expand_cases,
    load_study,
    study_from_dict,
)
from study_helpers import small_study


def _faults(data, source="s.toml"):
    with pytest.raises(StudyDefinitionError) as ei:
        study_from_dict(data, source=source)
    return ei.value


def test_spec_unknown_key_names_field_and_suggests():
    data = small_study()
    data["study"]["desing"] = "grid"
    err = _faults(data)
    assert err.source == "s.toml"
    assert len(err.faults) == 1
    assert err.faults[0].startswith("study.desing: unknown key. Did you mean 'design'?")
    assert str(err).startswith("s.toml: study.desing")


def test_spec_axis_needs_exactly_one_form():
    data = small_study(axis=[{"field": "mission.payload_mass", "values": [1.0], "low": 1.0, "high": 2.0}])
    err = _faults(data)
    assert err.faults == (f"axis[1]: {MSG_AXIS_FORM}.",)


def test_spec_axis_bad_field_path():
    data = small_study(axis=[{"field": "payload_mass", "values": [1.0]}])
    (fault,) = _faults(data).faults
    assert fault.startswith(f"axis[1].field: {MSG_FIELD_PATH}")
    assert "Got 'payload_mass'" in fault


def test_spec_axis_unknown_stage():
    data = small_study(axis=[{"field": "stage.booster.isp", "values": [300.0]}])
    (fault,) = _faults(data).faults
    assert re.match(re.escape(f"axis[1].field: {MSG_UNKNOWN_STAGE}. Got 'booster'"), fault)
    assert "'first'" in fault


def test_spec_sampled_axis_needs_method_on_grid():
    data = small_study(axis=[{"field": "mission.delta_v", "low": 9000.0, "high": 9500.0}])
    (fault,) = _faults(data).faults
    assert fault.startswith(f"axis[1]: {MSG_SAMPLED_NEEDS_METHOD}")


def test_spec_lhs_needs_samples():
    data = small_study(axis=[{"field": "mission.delta_v", "low": 9000.0, "high": 9500.0}])
    data["study"]["design"] = "lhs"
    (fault,) = _faults(data).faults
    assert fault.startswith("study.samples: required with design = 'lhs'")


def test_spec_unknown_propellant_and_wrong_value():
    data = small_study(propellants={"hx": {"isp": 300.0, "structural_coefficient": 1.5}},
                       choices={"propellant": {"first": ["hx", "nope"]}})
    faults = _faults(data).faults
    assert any(f.startswith(f"choices.propellant.first: 'nope' {MSG_UNKNOWN_PROPELLANT}") for f in faults)
    assert "propellants.hx.structural_coefficient: must be in (0, 1). Got 1.5." in faults


def test_spec_literal_and_type_errors():
    data = small_study()
    data["study"]["design"] = "random"
    data["objective"] = [{"metric": "gross_mass_kg", "sense": "smallest"}]
    faults = _faults(data).faults
    assert "study.design: must be one of 'grid', 'lhs' or 'sobol'. Got 'random'." in faults
    assert "objective[1].sense: must be one of 'min' or 'max'. Got 'smallest'." in faults


def test_spec_unknown_metric_needs_sense_and_wrong_unit():
    data = small_study(objective=[{"metric": "thing_kg"}], constraints={"max_gross_mass": "3 m/s"})
    faults = _faults(data).faults
    assert faults[0].startswith("objective[1].metric: unknown metric 'thing_kg'")
    assert "needs sense = 'min' or 'max'" in faults[0]
    assert faults[1].startswith("constraints.max_gross_mass: '3 m/s' has the wrong dimension")


def test_spec_misspelt_metric_suggests_the_known_one():
    data = small_study(objective=[{"metric": "gross_mass_kg"}, {"metric": "costs"}])
    (fault,) = _faults(data).faults
    assert fault.startswith("objective[2].metric: unknown metric 'costs'; did you mean 'cost'? "
                            "Known metrics: gross_mass_kg, ")
    assert "Input should" not in fault


def test_spec_axis_number_with_unit_string_one_line():
    """A unit string where start/stop take a plain SI number: file, field, value, what is allowed."""
    data = small_study(axis=[{"field": "mission.payload_mass", "start": 120.0, "stop": "240 m/s",
                              "num": 3}])
    err = _faults(data)
    assert err.faults == ("axis[1].stop: must be a number in the field's SI unit (kg for "
                          "mission.payload_mass); unit strings such as '4 kg' are allowed in "
                          "values = [...] only. Got '240 m/s'.",)
    assert str(err).startswith("s.toml: axis[1].stop: must be a number")


def test_spec_axis_value_without_a_unit_is_refused_at_load():
    """"6000" in values = [...] of a mass field: refused when the study loads, not as a failed case later;
    unit strings and plain numbers still load, and a dimensionless field takes a string number."""
    from sizing.units import MSG_NO_UNIT

    data = small_study(axis=[{"field": "mission.payload_mass", "values": [4000.0, "5 t", "6000", "7 m"]}])
    err = _faults(data)
    assert err.faults == (
        "axis[1].values[3] (mission.payload_mass): "
        + MSG_NO_UNIT.format(value="6000", plain="SI", unit="kg", example="12 kg"),
        "axis[1].values[4] (mission.payload_mass): '7 m' has the wrong dimension; a mass in units such as kg "
        "is expected.")
    assert str(err).startswith("s.toml has 2 errors")
    study_from_dict(small_study(axis=[{"field": "stage.first.structural_coefficient", "values": ["0.1", "12 %"]}]),
                    source="s.toml")


@pytest.mark.parametrize("study, fault", [
    ({"samples": "many"}, "study.samples: must be a whole number. Got 'many'."),
    ({"samples": 0}, "study.samples: must be > 0. Got 0."),
    ({"seed": 1.5}, "study.seed: must be a whole number. Got 1.5."),
])
def test_spec_type_faults_in_project_words(study, fault):
    data = small_study()
    data["study"].update(study)
    assert _faults(data).faults == (fault,)


def test_spec_stage_count_beyond_base():
    data = small_study(choices={"stage_count": [2, 4]})
    (fault,) = _faults(data).faults
    assert fault.startswith("choices.stage_count: each count must be in [1, 3]")
    assert fault.endswith("Got 4.")


def test_spec_objectives_required():
    data = small_study()
    del data["objective"]
    assert _faults(data).faults == ("objective: required key is missing.",)


def test_load_study_file_errors(tmp_path):
    p = tmp_path / "bad.toml"
    p.write_text("[study\nname='x'\n")
    with pytest.raises(StudyDefinitionError, match=re.escape(f"{p}: is not valid TOML")):
        load_study(p)
    with pytest.raises(StudyDefinitionError, match="file not found"):
        load_study(tmp_path / "missing.toml")
    q = tmp_path / "ref.toml"
    q.write_text('[base]\nproblem = "nowhere.toml"\n[[objective]]\nmetric = "gross_mass_kg"\n')
    with pytest.raises(StudyDefinitionError, match=re.escape("base.problem: cannot read 'nowhere.toml'")):
        load_study(q)


def test_fingerprint_ignores_comments_but_not_values(tmp_path):
    text = ('[base]\n[base.mission]\npayload_mass = 10.0\ndelta_v = 2000.0\n'
            '[[base.stage]]\nname = "a"\nisp = 200.0\nstructural_coefficient = 0.3\n'
            '[[objective]]\nmetric = "gross_mass_kg"\n')
    a, b, c = tmp_path / "a.toml", tmp_path / "b.toml", tmp_path / "c.toml"
    a.write_text(text)
    b.write_text("# a comment\n" + text.replace("= 10.0", "=   10.0"))
    c.write_text(text.replace("10.0", "11.0"))
    fa, fb, fc = (load_study(x).fingerprint for x in (a, b, c))
    assert fa == fb != fc


def test_expand_grid_is_full_factorial():
    study = study_from_dict(small_study())
    cases = expand_cases(study)
    assert len(cases) == 9
    assert len({c.key for c in cases}) == 9
    assert [c.case_id for c in cases] == list(range(9))
    assert {c.problem["mission"]["delta_v"] for c in cases} == {9000.0, 9500.0, 10000.0}


def test_expand_choices_dedupe_absent_stages():
    """Propellant choice on the third stage does not multiply two-stage cases."""
    data = small_study(
        propellants={"p1": {"isp": 300.0, "structural_coefficient": 0.1},
                     "p2": {"exhaust_velocity": "3.2 km/s", "structural_coefficient": 0.12}},
        choices={"stage_count": [2, 3], "propellant": {"third": ["p1", "p2"]}},
        axis=[{"field": "mission.payload_mass", "values": [10.0]}])
    cases = expand_cases(study_from_dict(data))
    assert len(cases) == 1 + 2
    two = [c for c in cases if c.inputs["stage_count"] == 2]
    assert two[0].inputs["propellant.third"] is None
    assert len(two[0].problem["stage"]) == 2
    three = [c for c in cases if c.inputs["propellant.third"] == "p2"][0]
    assert three.problem["stage"][2]["exhaust_velocity"] == "3.2 km/s"
    assert "isp" not in three.problem["stage"][2]


@pytest.mark.parametrize("design", ["lhs", "sobol"])
def test_expand_sampled_designs_cover_bounds(design):
    """Latin hypercube: each of n equal bins of each axis holds exactly one point
    (McKay, Beckman, Conover, Technometrics 21(2), 1979 -- the defining property)."""
    data = small_study(axis=[
        {"field": "mission.delta_v", "low": 9000.0, "high": 10000.0},
        {"field": "stage.*.structural_coefficient", "low": 0.05, "high": 0.2, "scale": "log"},
        {"field": "mission.payload_mass", "values": [1.0, 2.0]},
    ])
    data["study"].update(design=design, samples=16, seed=3)
    study = study_from_dict(data)
    cases = expand_cases(study)
    assert len(cases) == 32
    dv = np.array([c.inputs["mission.delta_v"] for c in cases[:16]])
    eps = np.array([c.inputs["stage.*.structural_coefficient"] for c in cases[:16]])
    assert dv.min() >= 9000.0 and dv.max() <= 10000.0
    assert eps.min() >= 0.05 and eps.max() <= 0.2
    assert all(s["structural_coefficient"] == cases[0].inputs["stage.*.structural_coefficient"]
               for s in cases[0].problem["stage"])
    if design == "lhs":
        bins = np.floor((dv - 9000.0) / 1000.0 * 16).astype(int)
        assert sorted(bins) == list(range(16))
    again = expand_cases(study_from_dict(copy.deepcopy(data)))
    assert [c.inputs for c in again] == [c.inputs for c in cases]


@pytest.mark.parametrize("name, n", [("jackdaw_quick.toml", 27), ("heron_sobol.toml", 2304),
                                     ("jackdaw_limits_lhs.toml", 128),
                                     ("heron_apogee_trade.toml", 14)])
def test_demo_studies_load_and_fix_their_requirement(name, n):
    """The shipped demo studies (invented scenario) validate and expand, and every case
    meets the same requirement (payload, delta-v or target), so each Pareto front ranks
    design choices only (docs/studies.md, "What a Pareto front means")."""
    from pathlib import Path

    from sizing.problem.load import problem_from_dict

    study = load_study(Path(__file__).resolve().parents[2] / "studies" / name)
    cases = expand_cases(study)
    assert len(cases) == n
    req = set()
    for c in cases[:: max(1, n // 64)]:
        p = problem_from_dict(c.problem)
        req.add((p.payload_mass_kg, p.delta_v_m_s, p.apogee_m, p.orbit_altitude_m))
    assert len(req) == 1, req


def test_study_missing_base_problem_is_one_line_naming_the_study(tmp_path):
    from sizing.errors import StudyDefinitionError
    from sizing.study.spec import load_study

    p = tmp_path / "s.toml"
    p.write_text('[study]\nname = "x"\n[base]\nproblem = "nothere.toml"\n'
                 '[[axis]]\nfield = "mission.payload_mass"\nvalues = [1.0, 2.0]\n'
                 '[[objective]]\nmetric = "gross_mass_kg"\n')
    with pytest.raises(StudyDefinitionError) as info:
        load_study(p)
    assert len(info.value.faults) == 1
    assert str(info.value).startswith(f"{p}: base.problem: cannot read 'nothere.toml'")


def test_study_outputs_carry_the_caution(tmp_path):
    import pandas as pd

    from sizing.result import CAUTION
    from sizing.study.runner import run_study

    root = Path(__file__).resolve().parents[2]
    out = tmp_path / "run"
    run_study(root / "studies" / "jackdaw_quick.toml", out, engine="serial")
    assert CAUTION in (out / "CAUTION.txt").read_text()
    assert pd.read_excel(out / "pareto.xlsx", sheet_name="caution")["caution"][0] == CAUTION
