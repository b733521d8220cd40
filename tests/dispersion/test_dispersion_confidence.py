"""Sizing an orbit to a probability: a propellant reserve carried above the last stage, checked by
flying the written design's own samples."""

from __future__ import annotations

import tomllib

import pytest

from dispersion_helpers import ROOT


@pytest.mark.slow
def test_orbit_sized_to_a_probability_carries_a_reserve_the_design_file_keeps(tmp_path):
    from sizing.dispersion.case import case_from_file
    from sizing.dispersion.confidence import solve_with_dispersions
    from sizing.dispersion.run import run_dispersion
    from sizing.problem.load import problem_from_dict, read_toml
    from sizing.report.design import write_design

    data = dict(read_toml(ROOT / "problems" / "jackdaw_orbit.toml"))
    table = dict(read_toml(ROOT / "problems" / "dispersions" / "jackdaw.toml")["dispersions"])
    table.update(samples=120, probability=0.95, confidence=0.5)
    data["dispersions"] = table
    problem = problem_from_dict(data, source="jackdaw.toml")
    result = solve_with_dispersions(problem)
    info = result.flight["confidence"]
    assert result.success and info["demonstrated"] and len(info["rounds"]) >= 2
    first, last = info["rounds"][0], info["rounds"][-1]
    assert first["sizing_target"] == 0.0 and first["bound"] > 0  # the unreserved design misses
    assert info["reserve_propellant_kg"] > 0 and last["gross_mass_kg"] > first["gross_mass_kg"]
    assert result.payload_mass_kg == pytest.approx(180.0 + info["reserve_propellant_kg"])
    design = write_design(result, tmp_path / "design.toml")
    d = tomllib.loads(design.read_text())
    assert d["dispersions"]["reserve_propellant"] == pytest.approx(info["reserve_propellant_kg"])
    case = case_from_file(design)
    assert case.payload_mass_kg == pytest.approx(180.0) and case.extra_top_mass_kg > 0
    s = run_dispersion(case, tmp_path / "run", engine="serial", write_outputs=False)
    assert s.statistics["probability_of_meeting"]["met"] == info["met"]
    assert s.statistics["requirement_demonstrated"] is True
    row = s.statistics["reserve_required"]
    assert row["reserve_propellant_kg"] <= info["reserve_propellant_kg"] * 1.05
