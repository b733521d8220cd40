"""Batch solver: same answers as the single-problem path."""

import numpy as np
import pytest

from sizing import problem_from_dict, solve, solve_batch


def test_solve_batch_matches_solve():
    rng = np.random.default_rng(3)
    m = 40
    c = rng.uniform(2000, 4400, (m, 3))
    e = rng.uniform(0.05, 0.25, (m, 3))
    pl = rng.uniform(1, 1000, m)
    dv = rng.uniform(0.2, 0.8, m) * np.sum(c * np.log(1 / e), axis=1)
    b = solve_batch(c, e, pl, dv)
    assert b.success.all()
    for k in range(m):
        p = problem_from_dict({"mission": {"payload_mass": pl[k], "delta_v": dv[k]},
                               "stage": [{"name": f"s{i}", "exhaust_velocity": c[k, i],
                                          "structural_coefficient": e[k, i]} for i in range(3)]})
        r = solve(p)
        assert b.gross_mass_kg[k] == pytest.approx(r.gross_mass_kg, rel=1e-9)
        assert b.propellant_mass_kg[k] == pytest.approx([s.propellant_mass_kg for s in r.stages], rel=1e-9)


def test_solve_batch_flags_unreachable_rows():
    b = solve_batch([[3000.0, 3000.0]] * 2, [[0.1, 0.1]] * 2, [1.0, 1.0], [5000.0, 20000.0])
    assert list(b.success) == [True, False]
    assert np.isnan(b.gross_mass_kg[1])
