"""Monte Carlo samples of the dispersed inputs: marginals, correlation, reproducible streams.

Correlated inputs are drawn through a Gaussian copula: independent standard
normal scores z are correlated by the Cholesky factor L of the correlation
matrix R (z' = L z, so cov(z') = L L^T = R), and each input's value is its
marginal's inverse CDF at Phi(z') (R. B. Nelsen, An Introduction to Copulas,
2nd ed., Springer, 2006, Sec. 3.1 and 5.1; for a normal marginal this is
simply mean + sigma z'). The coefficients of ``[[dispersions.correlation]]``
are therefore the correlations of the normal scores; for normal inputs they
are the inputs' own correlations.

Streams: samples are drawn in blocks of `BLOCK` consecutive sample ids, block b
from ``numpy.random.default_rng(SeedSequence([seed, b]))`` (PCG64). Sample i
depends only on the seed and i, so any subset of samples (a resumed run, a
worker's chunk, a larger ``--samples``) is drawn bit for bit as in one
uninterrupted run.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.special import ndtr, ndtri

from ..problem.dispersions import DispersionSpec, InputDispersion

__all__ = ["BLOCK", "Marginal", "resolve_marginal", "normal_scores", "draw"]

#: Samples per random stream block.
BLOCK = 1024


@dataclass(frozen=True, slots=True)
class Marginal:
    """The distribution of one input with its nominal resolved, SI.

    Attributes
    ----------
    name : str
    kind : str
        ``"normal"``, ``"uniform"`` or ``"list"``.
    nominal : float
        The design's value [unit of the input].
    a, b : float
        normal: mean and sigma; uniform: low and high; list: unused.
    truncate : float or None
        Normal tails cut at +-truncate sigmas [-].
    values, cum_weights : tuple of float
        list: the values and their cumulative probabilities (last = 1).
    unit : str
    """

    name: str
    kind: str
    nominal: float
    a: float = 0.0
    b: float = 0.0
    truncate: float | None = None
    values: tuple[float, ...] = ()
    cum_weights: tuple[float, ...] = ()
    unit: str = ""

    def from_scores(self, z: np.ndarray) -> np.ndarray:
        """Values [unit] at standard normal scores `z` (inverse-CDF transform of Phi(z))."""
        if self.kind == "normal":
            if self.truncate is None:
                return self.a + self.b * z
            lo = ndtr(-self.truncate)
            return self.a + self.b * ndtri(lo + ndtr(z) * (1.0 - 2.0 * lo))
        u = ndtr(z)
        if self.kind == "uniform":
            return self.a + (self.b - self.a) * u
        idx = np.minimum(np.searchsorted(np.asarray(self.cum_weights), u, side="right"), len(self.values) - 1)
        return np.asarray(self.values)[idx]

    @property
    def mean(self) -> float:
        """Expected value [unit]."""
        if self.kind == "normal":
            return self.a
        if self.kind == "uniform":
            return 0.5 * (self.a + self.b)
        return float(np.dot(self.values, self.weights))

    @property
    def std(self) -> float:
        """Standard deviation [unit] (truncated normal: sigma sqrt(1 - 2 t phi(t) / (2 Phi(t) - 1)))."""
        if self.kind == "normal":
            t = self.truncate
            if t is None:
                return self.b
            phi = math.exp(-0.5 * t * t) / math.sqrt(2.0 * math.pi)
            return self.b * math.sqrt(1.0 - 2.0 * t * phi / (2.0 * float(ndtr(t)) - 1.0))
        if self.kind == "uniform":
            return (self.b - self.a) / math.sqrt(12.0)
        w = self.weights
        m = self.mean
        return math.sqrt(float(np.dot(w, (np.asarray(self.values) - m) ** 2)))

    @property
    def weights(self) -> np.ndarray:
        return np.diff(np.concatenate([[0.0], self.cum_weights]))

    def describe(self) -> str:
        """One line, e.g. ``"normal, mean 195 s, sigma 1.95 s"``."""
        u = f" {self.unit}" if self.unit and self.unit != "-" else ""
        if self.kind == "normal":
            cut = f", cut at {self.truncate:g} sigma" if self.truncate is not None else ""
            return f"normal, mean {self.a:.6g}{u}, sigma {self.b:.4g}{u}{cut}"
        if self.kind == "uniform":
            return f"uniform {self.a:.6g} to {self.b:.6g}{u}"
        return f"list of {len(self.values)} values {min(self.values):.6g} to {max(self.values):.6g}{u}"


def resolve_marginal(inp: InputDispersion, nominal: float) -> Marginal:
    """The marginal of an input around the design's nominal value.

    Raises
    ------
    ValueError
        A percentage spread of a zero nominal (`MSG_PERCENT_OF_ZERO`).
    """
    from ..problem.dispersions import MSG_PERCENT_OF_ZERO

    centre = nominal if inp.mean is None else inp.mean
    scale = abs(nominal) if inp.relative else 1.0
    if inp.relative and nominal == 0.0:
        raise ValueError(f"dispersions: {inp.quantity}: {MSG_PERCENT_OF_ZERO} (nominal 0 {inp.unit}).")
    common = dict(name=inp.quantity, nominal=nominal, unit=inp.unit)
    if inp.distribution == "normal":
        return Marginal(kind="normal", a=centre, b=inp.sigma * scale, truncate=inp.truncate, **common)
    if inp.distribution == "uniform":
        if inp.low is not None:
            return Marginal(kind="uniform", a=inp.low, b=inp.high, **common)
        hw = inp.half_width * scale
        return Marginal(kind="uniform", a=centre - hw, b=centre + hw, **common)
    w = inp.weights or tuple(1.0 / len(inp.values) for _ in inp.values)
    cum = tuple(float(c) for c in np.cumsum(w))
    return Marginal(kind="list", values=tuple(inp.values), cum_weights=cum[:-1] + (1.0,), **common)


def normal_scores(spec: DispersionSpec, ids: np.ndarray) -> np.ndarray:
    """Correlated standard normal scores of the samples `ids` (len(ids) x n_inputs), bit-reproducible."""
    ids = np.asarray(ids, dtype=np.int64)
    k = len(spec.inputs)
    out = np.empty((ids.size, k))
    if ids.size == 0:
        return out
    chol = np.linalg.cholesky(np.array(spec.correlation)) if spec.is_correlated else None
    blocks = ids // BLOCK
    for b in np.unique(blocks):
        rng = np.random.default_rng(np.random.SeedSequence([int(spec.seed), int(b)]))
        z = rng.standard_normal((BLOCK, k))
        if chol is not None:
            z = z @ chol.T
        sel = blocks == b
        out[sel] = z[ids[sel] - b * BLOCK]
    return out


def draw(spec: DispersionSpec, marginals: tuple[Marginal, ...], ids) -> np.ndarray:
    """Input values of the samples `ids`: one row per sample, one column per input [SI units]."""
    z = normal_scores(spec, np.asarray(ids, dtype=np.int64))
    out = np.empty_like(z)
    for j, m in enumerate(marginals):
        out[:, j] = m.from_scores(z[:, j])
    return out
