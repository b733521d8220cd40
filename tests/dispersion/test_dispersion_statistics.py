"""Order statistics, probability bounds, root-sum-square and the landing ellipse against their sources."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from sizing.dispersion import statistics as S


@pytest.mark.parametrize("p,c,failures,expected", [
    # Hanson & Beard, J. Spacecraft and Rockets 49(1), 2012, table of Monte Carlo sample counts
    # (values from memory): 99.7 % and 99.73 % success at 90 % confidence, 0-2 failures.
    (0.997, 0.9, 0, 767), (0.997, 0.9, 1, 1296), (0.997, 0.9, 2, 1773),
    (0.9973, 0.9, 0, 852), (0.9973, 0.9, 1, 1440),
])
def test_samples_needed_match_hanson_beard_table(p, c, failures, expected):
    assert S.samples_needed(p, c, failures) == expected


@pytest.mark.parametrize("p", [0.9, 0.95, 0.99, 0.995, 0.999])
@pytest.mark.parametrize("c", [0.5, 0.9, 0.95, 0.99])
def test_samples_needed_without_failure_is_wilks_closed_form(p, c):
    """Wilks, Ann. Math. Statist. 12(1), 1941: the smallest n with 1 - p^n >= c."""
    n = S.samples_needed(p, c)
    assert 1 - p ** n >= c > 1 - p ** (n - 1)


@pytest.mark.parametrize("n,p,c", [(300, 0.99, 0.9), (1000, 0.997, 0.9), (59, 0.95, 0.95), (2000, 0.9, 0.5)])
def test_tolerance_rank_is_the_binomial_quantile(n, p, c):
    """The rank m: the smallest with P(Bin(n, p) <= m - 1) >= c (scipy.stats.binom)."""
    m = S.tolerance_rank(n, p, c)
    assert stats.binom.cdf(m - 1, n, p) >= c > stats.binom.cdf(m - 2, n, p)


def test_order_statistic_bound_covers_the_quantile_as_often_as_the_confidence():
    """Property: over 4000 repeated runs of 300 uniform samples, the (0.99, 0.9) bound exceeds the true
    0.99-quantile in a fraction matching its exact confidence, within 4 standard errors."""
    rng = np.random.default_rng(7)
    n, p, c = 300, 0.99, 0.9
    m = S.tolerance_rank(n, p, c)
    x = np.sort(rng.random((4000, n)), axis=1)[:, m - 1]
    exact = stats.binom.cdf(m - 1, n, p)
    assert exact >= c
    assert np.mean(x >= p) == pytest.approx(exact, abs=4 * math.sqrt(exact * (1 - exact) / 4000))


def test_order_statistic_bound_with_too_few_samples():
    b = S.order_statistic_bound(np.arange(100.0), 0.997, 0.9)
    assert not b["enough_samples"] and math.isnan(b["bound"]) and b["samples_needed_no_failure"] == 767


def test_probability_bounds_all_successes_is_the_closed_form():
    """Clopper-Pearson with every trial a success: lower one-sided bound (1 - c)^(1/n) (Clopper & Pearson 1934)."""
    b = S.probability_bounds(230, 230, 0.9)
    assert b["lower"] == pytest.approx(0.1 ** (1 / 230), rel=1e-12)
    assert b["lower"] >= 0.99  # consistent with samples_needed(0.99, 0.9) == 230
    b = S.probability_bounds(40, 50, 0.95)
    assert b["interval_low"] == pytest.approx(stats.beta.ppf(0.025, 40, 11))
    assert b["interval_high"] == pytest.approx(stats.beta.ppf(0.975, 41, 10))


def test_rss_sigma_with_correlation():
    """JCGM 100:2008 eq. 13 for two inputs: sigma^2 = g1^2 + g2^2 + 2 rho g1 g2."""
    assert S.rss_sigma([3.0, 4.0], [[1, 0], [0, 1]]) == pytest.approx(5.0)
    assert S.rss_sigma([3.0, 4.0], [[1, 0.5], [0.5, 1]]) == pytest.approx(math.sqrt(9 + 16 + 12))


def test_rank_sensitivities_order_and_sign_match_scipy_spearman():
    rng = np.random.default_rng(3)
    a, b, c = rng.normal(size=(3, 2000))
    y = -3 * a + np.exp(b) + 0.1 * c
    rows = S.rank_sensitivities({"a": a, "b": b, "c": c, "flat": np.ones(2000)}, y)
    assert [r["input"] for r in rows][:3] == ["a", "b", "c"]
    assert rows[0]["rank_correlation"] == pytest.approx(stats.spearmanr(a, y).statistic)
    assert rows[0]["rank_correlation"] < 0 < rows[1]["rank_correlation"]
    assert sum(r["share"] for r in rows) == pytest.approx(1.0)


def test_landing_ellipse_of_a_known_normal_cloud():
    """Johnson & Wichern, Applied Multivariate Statistical Analysis, 6th ed., Result 4.7:
    the p-contour of N(mu, Sigma) has semi-axes sqrt(lambda_i chi2_2(p)) and holds probability p."""
    rng = np.random.default_rng(1)
    th = math.radians(30.0)
    rot = np.array([[math.cos(th), -math.sin(th)], [math.sin(th), math.cos(th)]])
    cov = rot @ np.diag([10.0 ** 2, 4.0 ** 2]) @ rot.T
    pts = rng.multivariate_normal([100.0, -50.0], cov, size=20_000)
    e = S.landing_ellipse(pts[:, 0], pts[:, 1], 0.9)
    k = math.sqrt(stats.chi2.ppf(0.9, 2))
    assert e["semi_major_m"] == pytest.approx(10 * k, rel=0.03)
    assert e["semi_minor_m"] == pytest.approx(4 * k, rel=0.03)
    assert e["sample_share_inside"] == pytest.approx(0.9, abs=0.01)
    # major axis at 30 deg from the east axis: bearing (from north) 60 deg
    assert e["major_axis_bearing_deg"] == pytest.approx(60.0, abs=2.0)


def test_reserve_table_normal_fit_and_rss_columns():
    loss = np.random.default_rng(2).normal(10.0, 2.0, 5000)
    rows = S.reserve_table(loss, 0.9, [0.99], 2.0)
    r = rows[0]
    assert r["reserve_normal_fit"] == pytest.approx(10 + 2.326 * 2, abs=0.2)
    assert r["reserve_rss"] == pytest.approx(2.3263 * 2, rel=1e-3)
    assert r["reserve_order_statistic"] == pytest.approx(stats.norm(10, 2).ppf(0.99), abs=0.5)
