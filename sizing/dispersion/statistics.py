"""Statistics of a dispersion run: probability of meeting the target, percentiles, reserves, sensitivities.

Order statistics (non-parametric, any distribution): with n independent
samples, the m-th smallest value X_(m) exceeds the p-quantile x_p unless m or
more samples fall below it, so P(X_(m) >= x_p) = P(Bin(n, p) <= m - 1). The
smallest m with that probability >= the confidence c makes X_(m) an upper
(p, c) tolerance bound; with m = n (the largest sample) the confidence is
1 - p^n, so n >= ln(1 - c) / ln(p) samples are needed at the least
(S. S. Wilks, "Determination of sample sizes for setting tolerance limits",
Ann. Math. Statist. 12(1), 1941, 91-96). Applied to the performance lost
against the nominal flight this gives the flight performance reserve, the
method of J. M. Hanson and B. B. Beard, "Applying Monte Carlo Simulation to
Launch Vehicle Design and Requirements Verification", J. Spacecraft and
Rockets 49(1), 2012, 136-144, which tabulates the sample counts for zero and
more failures.

The probability of meeting the target is the success fraction with its
Clopper-Pearson bounds (C. J. Clopper, E. S. Pearson, Biometrika 26(4), 1934,
404-413): the lower bound at confidence c is the c-level one-sided bound.

The root-sum-square reserve is the classic linear alternative: each input's
one-sigma effect g_j on the performance (central differences of flights at
the nominal +- one standard deviation), sigma^2 = g^T R g with R the inputs'
correlation matrix (the law of propagation of uncertainty, JCGM 100:2008,
Guide to the Expression of Uncertainty in Measurement, eq. 13), and the
reserve z_p sigma with z_p the standard normal p-quantile.

Sensitivities are Spearman rank correlations of each input with the margin
(`scipy.stats.spearmanr`; monotone effects, any distribution). The landing
ellipse is the bivariate normal contour holding probability p: semi-axes
sqrt(lambda_i chi2_2(p)) along the covariance eigenvectors, chi2_2(p) =
-2 ln(1 - p) (R. A. Johnson, D. W. Wichern, Applied Multivariate Statistical
Analysis, 6th ed., 2007, Result 4.7).
"""

from __future__ import annotations

import math
from typing import Any, Mapping, Sequence

import numpy as np
from scipy import stats
from scipy.special import ndtri

__all__ = ["PERCENTILES", "REPORT_PROBABILITIES", "tolerance_rank", "samples_needed", "probability_bounds",
           "order_statistic_bound", "rss_sigma", "rank_sensitivities", "landing_ellipse", "percentile_table",
           "reserve_table"]

#: Percentiles reported for every figure [%].
PERCENTILES = (0.135, 1.0, 5.0, 50.0, 95.0, 99.0, 99.865)
#: Probabilities of the reserve table besides the required one [-] (0.99865: one-sided three sigma).
REPORT_PROBABILITIES = (0.9, 0.99, 0.997, 0.99865)


def tolerance_rank(n: int, p: float, c: float) -> int | None:
    """Smallest 1-based rank m whose order statistic X_(m) of n samples bounds the p-quantile from above
    with confidence c; None when n samples are too few (1 - p^n < c).

    Examples
    --------
    >>> tolerance_rank(767, 0.997, 0.9)   # 0.997^767 = 0.0999...: the largest sample just suffices
    767
    >>> tolerance_rank(766, 0.997, 0.9) is None
    True
    """
    if n < 1:
        return None
    m = int(stats.binom.ppf(c, n, p)) + 1  # first m with P(Bin(n, p) <= m - 1) >= c
    while m > 1 and stats.binom.cdf(m - 2, n, p) >= c:
        m -= 1
    while m <= n and stats.binom.cdf(m - 1, n, p) < c:
        m += 1
    return m if m <= n else None


def samples_needed(p: float, c: float, failures: int = 0) -> int:
    """Fewest samples with which `failures` samples beyond the bound still demonstrate (p, c).

    The smallest n with P(Bin(n, 1 - p) <= failures) <= 1 - c; for no failure
    n = ceil(ln(1 - c) / ln(p)) (Wilks 1941).

    Examples
    --------
    >>> samples_needed(0.9973, 0.9)
    852
    """
    n = max(1, math.ceil(math.log1p(-c) / math.log(p) - 1e-9))
    while stats.binom.cdf(failures, n, 1.0 - p) > 1.0 - c:
        n += 1
    return n


def probability_bounds(successes: int, n: int, c: float) -> dict[str, float]:
    """Success fraction and its Clopper-Pearson bounds: one-sided lower at c, two-sided interval at c."""
    if n == 0:
        return {"estimate": math.nan, "lower": math.nan, "interval_low": math.nan, "interval_high": math.nan}
    k = successes
    lower = float(stats.beta.ppf(1.0 - c, k, n - k + 1)) if k > 0 else 0.0
    lo2 = float(stats.beta.ppf(0.5 * (1.0 - c), k, n - k + 1)) if k > 0 else 0.0
    hi2 = float(stats.beta.ppf(0.5 * (1.0 + c), k + 1, n - k)) if k < n else 1.0
    return {"estimate": k / n, "lower": lower, "interval_low": lo2, "interval_high": hi2}


def order_statistic_bound(values: np.ndarray, p: float, c: float) -> dict[str, Any]:
    """Upper (p, c) tolerance bound of `values` (inf allowed: failed flights) by order statistics."""
    x = np.sort(np.asarray(values, dtype=float))
    n = x.size
    m = tolerance_rank(n, p, c)
    need = samples_needed(p, c)
    out = {"probability": p, "confidence": c, "n": n, "samples_needed_no_failure": need, "rank": m,
           "exceedances_allowed": None if m is None else n - m, "enough_samples": m is not None}
    out["bound"] = float(x[m - 1]) if m is not None else math.nan
    return out


def rss_sigma(one_sigma_effects: Sequence[float], correlation: Sequence[Sequence[float]]) -> float:
    """sqrt(g^T R g): the linear (root-sum-square) standard deviation of the performance [its unit]."""
    g = np.asarray(one_sigma_effects, dtype=float)
    if g.size == 0:
        return 0.0
    return float(math.sqrt(max(0.0, g @ np.asarray(correlation, dtype=float) @ g)))


def rank_sensitivities(inputs: Mapping[str, np.ndarray], output: np.ndarray) -> list[dict[str, Any]]:
    """Spearman rank correlation of each input with the output, largest magnitude first."""
    y = np.asarray(output, dtype=float)
    ok = np.isfinite(y)
    rows = []
    for name, x in inputs.items():
        x = np.asarray(x, dtype=float)
        sel = ok & np.isfinite(x)
        if sel.sum() < 3 or np.ptp(x[sel]) == 0 or np.ptp(y[sel]) == 0:
            rho = 0.0
        else:
            rho = float(stats.spearmanr(x[sel], y[sel]).statistic)
        rows.append({"input": name, "rank_correlation": rho})
    total = sum(r["rank_correlation"] ** 2 for r in rows) or 1.0
    for r in rows:
        r["share"] = r["rank_correlation"] ** 2 / total
    return sorted(rows, key=lambda r: -abs(r["rank_correlation"]))


def landing_ellipse(east: np.ndarray, north: np.ndarray, p: float) -> dict[str, float]:
    """Mean landing point and the normal-theory ellipse holding probability p, with the sample share inside."""
    e, n = np.asarray(east, dtype=float), np.asarray(north, dtype=float)
    sel = np.isfinite(e) & np.isfinite(n)
    e, n = e[sel], n[sel]
    if e.size < 3:
        return {}
    mu = np.array([e.mean(), n.mean()])
    cov = np.cov(np.vstack([e, n]))
    lam, vec = np.linalg.eigh(cov)
    k2 = -2.0 * math.log1p(-p)
    major = vec[:, 1]
    d = np.vstack([e, n]).T - mu
    inv = np.linalg.pinv(cov)
    inside = float(np.mean(np.einsum("ij,jk,ik->i", d, inv, d) <= k2))
    return {"probability": p, "mean_east_m": float(mu[0]), "mean_north_m": float(mu[1]),
            "semi_major_m": float(math.sqrt(max(lam[1], 0.0) * k2)),
            "semi_minor_m": float(math.sqrt(max(lam[0], 0.0) * k2)),
            "major_axis_bearing_deg": float(math.degrees(math.atan2(major[0], major[1])) % 180.0),
            "sigma_east_m": float(math.sqrt(cov[0, 0])), "sigma_north_m": float(math.sqrt(cov[1, 1])),
            "sample_share_inside": inside}


def percentile_table(figures: Mapping[str, np.ndarray]) -> list[dict[str, Any]]:
    """Mean, standard deviation, extremes and `PERCENTILES` of each figure (finite values)."""
    rows = []
    for name, v in figures.items():
        x = np.asarray(v, dtype=float)
        x = x[np.isfinite(x)]
        if x.size == 0:
            continue
        row = {"figure": name, "n": int(x.size), "mean": float(x.mean()),
               "std": float(x.std(ddof=1)) if x.size > 1 else 0.0, "min": float(x.min()), "max": float(x.max())}
        row.update({f"p{q:g}": float(v) for q, v in zip(PERCENTILES, np.percentile(x, PERCENTILES))})
        rows.append(row)
    return rows


def reserve_table(loss: np.ndarray, c: float, probabilities: Sequence[float], rss_sigma_value: float | None
                  ) -> list[dict[str, Any]]:
    """Reserve for each probability: order statistic (p, c), normal fit of the samples, and root-sum-square."""
    x = np.asarray(loss, dtype=float)
    fin = x[np.isfinite(x)]
    mean = float(fin.mean()) if fin.size else math.nan
    std = float(fin.std(ddof=1)) if fin.size > 1 else math.nan
    rows = []
    for p in probabilities:
        z = float(ndtri(p))
        b = order_statistic_bound(x, p, c)
        rows.append({**b, "reserve_order_statistic": b["bound"], "z": z,
                     "reserve_normal_fit": mean + z * std,
                     "reserve_rss": math.nan if rss_sigma_value is None else z * rss_sigma_value})
    return rows
