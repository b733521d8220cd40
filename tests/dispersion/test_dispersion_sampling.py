"""Samples: reproducible by id from the seed, marginals and correlations as specified."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from sizing.dispersion.sampling import BLOCK, draw, normal_scores, resolve_marginal
from sizing.problem.dispersions import parse_dispersions


def _spec(inputs, correlation=None, seed=11):
    raw = {"seed": seed, "input": inputs}
    if correlation:
        raw["correlation"] = correlation
    spec, faults = parse_dispersions(raw, ["a", "b"], has_wind=True)
    assert not faults, faults
    return spec


NORMAL = {"quantity": "a.isp", "distribution": "normal", "sigma": "2 %"}
UNIFORM = {"quantity": "b.isp", "distribution": "uniform", "half_width": "3 s"}
LIST = {"quantity": "payload_mass", "distribution": "list", "values": [1.0, 2.0, 4.0], "weights": [1, 1, 2]}


def test_sampling_same_seed_same_values_bit_for_bit_for_any_subset():
    """A sample depends on the seed and its id only: chunks, orders and resumed subsets draw identical bits."""
    spec = _spec([NORMAL, UNIFORM, LIST], [{"quantities": ["a.isp", "b.isp"], "coefficient": 0.4}])
    ms = tuple(resolve_marginal(i, n) for i, n in zip(spec.inputs, (300.0, 320.0, 2.0)))
    ids = np.arange(3 * BLOCK + 17)
    whole = draw(spec, ms, ids)
    rng = np.random.default_rng(5)
    part = rng.choice(ids, size=500, replace=False)
    assert np.array_equal(draw(spec, ms, part), whole[part])
    assert np.array_equal(draw(spec, ms, ids[::-1]), whole[::-1])
    other = _spec([NORMAL, UNIFORM, LIST], [{"quantities": ["a.isp", "b.isp"], "coefficient": 0.4}], seed=12)
    assert not np.array_equal(draw(other, ms, ids[:10]), whole[:10])


def test_sampling_correlated_scores_have_the_stated_correlation():
    """Statistical check: the sample correlation of 40 000 scores is within 5 standard errors
    ((1 - rho^2) / sqrt(n), the large-sample standard error of Pearson's r; from memory)."""
    spec = _spec([NORMAL, UNIFORM], [{"quantities": ["a.isp", "b.isp"], "coefficient": -0.6}])
    z = normal_scores(spec, np.arange(40_000))
    r = np.corrcoef(z.T)[0, 1]
    assert r == pytest.approx(-0.6, abs=5 * (1 - 0.36) / math.sqrt(40_000))
    assert z.mean(axis=0) == pytest.approx([0, 0], abs=5 / math.sqrt(40_000))


def test_sampling_marginals_match_scipy_distributions():
    """Means and standard deviations of the marginals against scipy.stats (truncated normal: truncnorm)."""
    spec = _spec([dict(NORMAL, truncate=1.5), UNIFORM, LIST])
    ms = [resolve_marginal(i, n) for i, n in zip(spec.inputs, (300.0, 320.0, 2.0))]
    tn = stats.truncnorm(-1.5, 1.5, loc=300.0, scale=6.0)
    assert ms[0].std == pytest.approx(tn.std(), rel=1e-12) and ms[0].mean == 300.0
    un = stats.uniform(loc=317.0, scale=6.0)
    assert ms[1].std == pytest.approx(un.std(), rel=1e-12) and ms[1].mean == pytest.approx(un.mean())
    assert ms[2].mean == pytest.approx(0.25 * 1 + 0.25 * 2 + 0.5 * 4)
    x = draw(spec, tuple(ms), np.arange(50_000))
    assert x[:, 0].min() >= 300.0 - 9.0 - 1e-9 and x[:, 0].max() <= 309.0 + 1e-9
    assert stats.kstest(x[:, 0], tn.cdf).pvalue > 1e-3
    assert stats.kstest(x[:, 1], un.cdf).pvalue > 1e-3
    frac = [np.mean(x[:, 2] == v) for v in (1.0, 2.0, 4.0)]
    assert frac == pytest.approx([0.25, 0.25, 0.5], abs=0.01)


def test_sampling_normal_marginal_is_mean_plus_sigma_times_score():
    spec = _spec([NORMAL])
    m = resolve_marginal(spec.inputs[0], 300.0)
    z = normal_scores(spec, np.arange(100))[:, 0]
    assert np.array_equal(draw(spec, (m,), np.arange(100))[:, 0], 300.0 + 6.0 * z)


def test_sampling_percentage_of_a_zero_nominal_is_refused():
    from sizing.problem.dispersions import MSG_PERCENT_OF_ZERO

    spec = _spec([NORMAL])
    with pytest.raises(ValueError, match=MSG_PERCENT_OF_ZERO):
        resolve_marginal(spec.inputs[0], 0.0)
