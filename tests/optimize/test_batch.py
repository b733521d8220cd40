"""Batch solver: same answers as the single-problem path."""

import numpy as np
import pytest

from sizing import problem_from_dict, solve, solve_batch


def test_solve_batch_matches_solve():
    """The batch path returns the single-problem answer for every row (consistency check, no
    external source; the single-problem path is checked against Curtis in tests/reference)."""
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
    """A row above the supremum sum c ln(1/eps) (here 3000 ln 10 * 2 = 13 816 m/s < 20 000 m/s) is
    flagged, not solved (rocket-equation limit with zero payload; computed, consistency check)."""
    b = solve_batch([[3000.0, 3000.0]] * 2, [[0.1, 0.1]] * 2, [1.0, 1.0], [5000.0, 20000.0])
    assert list(b.success) == [True, False]
    assert np.isnan(b.gross_mass_kg[1])
