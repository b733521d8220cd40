"""Non-dominated sorting against a brute-force check of the definition."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from sizing.study.pareto import non_dominated_ranks, pareto_mask, to_minimisation


def _dominates(a, b) -> bool:
    return bool(np.all(a <= b) and np.any(a < b))


def _brute_mask(F):
    n = len(F)
    return np.array([not any(_dominates(F[j], F[i]) for j in range(n) if j != i) for i in range(n)])


def _brute_ranks(F):
    """Deb et al. (2002), NSGA-II, Sec. III-A: peel fronts by the definition of dominance."""
    ranks = np.full(len(F), -1)
    left = list(range(len(F)))
    r = 0
    while left:
        front = [i for i in left if not any(_dominates(F[j], F[i]) for j in left if j != i)]
        ranks[front] = r
        left = [i for i in left if i not in front]
        r += 1
    return ranks


@given(F=st.integers(2, 3).flatmap(lambda k: arrays(
    np.float64, st.tuples(st.integers(1, 40), st.just(k)),
    elements=st.integers(0, 6).map(float))))
def test_pareto_mask_matches_brute_force(F):
    """Property: the fast front equals the O(n^2) definition, ties and duplicates included."""
    assert pareto_mask(F).tolist() == _brute_mask(F).tolist()
    assert non_dominated_ranks(F).tolist() == _brute_ranks(F).tolist()


@given(F=st.integers(1, 4).flatmap(lambda k: arrays(
    np.float64, st.tuples(st.integers(1, 60), st.just(k)),
    elements=st.integers(0, 4).map(float))), cap=st.integers(1, 4))
def test_non_dominated_ranks_capped_matches_brute_force(F, cap):
    """Property: with max_rank, ranks below the cap are exact and the rest equal the cap
    (one to four objectives, many ties)."""
    want = np.minimum(_brute_ranks(F), cap)
    assert non_dominated_ranks(F, max_rank=cap).tolist() == want.tolist()
    assert pareto_mask(F).tolist() == _brute_mask(F).tolist()


def test_pareto_blocked_scan_crosses_blocks():
    """More rows than one scan block (2048): fronts found across blocks equal the definition."""
    rng = np.random.default_rng(3)
    F = np.round(rng.random((2600, 3)) * 20.0)
    F[:, 2] = 40.0 - F[:, 0] - F[:, 1] + np.round(rng.random(2600) * 3.0)
    # the definition, vectorised: dom[i, j] = row j dominates row i
    dom = np.all(F[None, :, :] <= F[:, None, :], axis=2) & np.any(F[None, :, :] < F[:, None, :], axis=2)
    want = np.full(len(F), 3)
    left = np.ones(len(F), dtype=bool)
    for r in range(3):
        front = left & ~np.any(dom[:, left], axis=1)
        want[front] = r
        left &= ~front
    assert non_dominated_ranks(F, max_rank=3).tolist() == want.tolist()


def test_pareto_random_continuous_three_objectives():
    F = np.random.default_rng(7).random((300, 3))
    assert pareto_mask(F).tolist() == _brute_mask(F).tolist()


def test_pareto_known_front_and_senses():
    """Hand-checked: minimise mass, maximise payload."""
    mass = [10.0, 12.0, 11.0, 15.0, 10.0]
    payload = [5.0, 8.0, 4.0, 9.0, 6.0]
    F = to_minimisation(np.column_stack([mass, payload]), ["min", "max"])
    # row 4 (10 kg, 6) dominates row 0 (10 kg, 5) and row 2 (11 kg, 4)
    assert pareto_mask(F).tolist() == [False, True, False, True, True]
    assert non_dominated_ranks(F).tolist() == [1, 0, 2, 0, 0]


def test_pareto_nan_rows_excluded():
    F = np.array([[1.0, np.nan], [2.0, 2.0], [3.0, 1.0]])
    assert pareto_mask(F).tolist() == [False, True, True]
    assert non_dominated_ranks(F).tolist() == [-1, 0, 0]


def test_to_minimisation_rejects_bad_sense():
    with pytest.raises(ValueError, match="senses must be 'min' or 'max'"):
        to_minimisation([[1.0]], ["least"])
