"""Studies vary stage-model keys: propellant, diameter, engine count, chamber pressure, structure keys."""

from __future__ import annotations

from pathlib import Path

from sizing.study.evaluate import EvalContext, evaluate_case, is_batch_eligible
from sizing.study.spec import expand_cases, load_study, study_from_dict

ROOT = Path(__file__).resolve().parents[2]


def test_demo_trade_study_expands_and_sizes_a_case():
    study = load_study(ROOT / "studies" / "corvid_upper_propellant_trade.toml")
    cases = expand_cases(study)
    assert len(cases) == 36
    ctx = EvalContext.from_study(study)
    by = {}
    for c in cases:
        i = c.inputs
        if i["upper diameter"] == 1.8 and i["upper engines"] == 1 and i["upper tanks"] == "per_volume":
            by[i["upper propellant"]] = evaluate_case({"case_id": c.case_id, "key": c.key, "inputs": c.inputs,
                                                       "problem": c.problem}, ctx)
    assert set(by) == {"lox-rp1", "lox-ch4", "lox-lh2"}
    for out in by.values():
        assert out["status"] == "ok", out["message"]
    eps = {k: v["result"]["stages"][1]["structural_coefficient"] for k, v in by.items()}
    length = {k: v["metrics"]["stage.upper.stage_length_m"] for k, v in by.items()}
    gross = {k: v["metrics"]["gross_mass_kg"] for k, v in by.items()}
    # hydrogen: the lightest stack, but the bulkiest and structurally heaviest upper stage
    assert gross["lox-lh2"] < min(gross["lox-ch4"], gross["lox-rp1"])
    assert eps["lox-lh2"] > max(eps["lox-ch4"], eps["lox-rp1"])
    assert length["lox-lh2"] > max(length["lox-ch4"], length["lox-rp1"])


def test_axis_on_structure_key_and_chamber_pressure():
    base = {"mission": {"payload_mass": 100.0, "delta_v": 7000.0},
            "stage": [{"name": "a", "propellant": "lox-rp1", "diameter": 1.2, "thrust_to_weight": 1.4,
                       "structure": {}},
                      {"name": "b", "propellant": "lox-ch4", "diameter": 1.2, "thrust_to_weight": 0.9,
                       "structure": {"tank": "pressure_vessel"}}]}
    study = study_from_dict({
        "base": base,
        "axis": [{"field": "stage.b.structure.material", "values": ["al2219-t87", "ti6al4v"]},
                 {"field": "stage.*.chamber_pressure", "values": [5e6, 10e6]}],
        "objective": [{"metric": "gross_mass_kg"}]})
    cases = expand_cases(study)
    assert len(cases) == 4
    assert cases[0].problem["stage"][1]["structure"] == {"tank": "pressure_vessel", "material": "al2219-t87"}
    assert cases[0].problem["stage"][0]["chamber_pressure"] == 5e6
    from sizing.problem.load import problem_from_dict

    assert not is_batch_eligible(problem_from_dict(cases[0].problem))
