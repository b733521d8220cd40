"""Non-dominated sorting of designs over 2-3 objectives.

Point a dominates point b (all objectives minimised) when a <= b in every
objective and a < b in at least one (Pareto dominance). Rank 0 is the
non-dominated set (the Pareto front); rank k is the front of what is left
after removing ranks < k ("non-dominated sorting", Deb et al., NSGA-II).

References
----------
.. [1] K. Deb, A. Pratap, S. Agarwal, T. Meyarivan, "A fast and elitist
   multiobjective genetic algorithm: NSGA-II", IEEE Trans. Evolutionary
   Computation 6(2), 2002, Sec. III-A (non-dominated sorting).
.. [2] H. T. Kung, F. Luccio, F. P. Preparata, "On finding the maxima of a set
   of vectors", J. ACM 22(4), 1975 (sort on the first objective, then scan).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

__all__ = ["to_minimisation", "pareto_mask", "non_dominated_ranks"]


def to_minimisation(values, senses: Sequence[str]) -> np.ndarray:
    """Objective matrix with every column turned into 'smaller is better'.

    Parameters
    ----------
    values : array_like, shape (n, k)
    senses : sequence of {'min', 'max'}, length k

    Returns
    -------
    ndarray, shape (n, k)
        Columns with sense 'max' negated.
    """
    F = np.asarray(values, dtype=float)
    if F.ndim != 2 or F.shape[1] != len(senses):
        raise ValueError(f"values must have shape (n, {len(senses)}). Got {F.shape}.")
    sign = np.array([1.0 if s == "min" else -1.0 if s == "max" else np.nan for s in senses])
    if np.isnan(sign).any():
        raise ValueError(f"senses must be 'min' or 'max'. Got {list(senses)!r}.")
    return F * sign


def pareto_mask(F) -> np.ndarray:
    """True for the rows of F (minimised) that no other row dominates.

    Rows with a NaN are never on the front. Equal rows are all kept.
    Cost is O(n log n + n * front size): rows are sorted lexicographically,
    so a row can only be dominated by an earlier one, and (by transitivity)
    only a front member needs checking.

    Parameters
    ----------
    F : array_like, shape (n, k)

    Returns
    -------
    ndarray of bool, shape (n,)

    Examples
    --------
    >>> pareto_mask([[1, 4], [2, 2], [3, 3], [4, 1]]).tolist()
    [True, True, False, True]
    """
    F = np.asarray(F, dtype=float)
    n = F.shape[0]
    mask = np.zeros(n, dtype=bool)
    if n == 0:
        return mask
    ok = ~np.isnan(F).any(axis=1)
    idx = np.flatnonzero(ok)
    G = F[idx]
    order = np.lexsort(G.T[::-1])
    front = np.empty_like(G)
    nf = 0
    members: list[int] = []
    for j in order:
        p = G[j]
        if nf:
            fr = front[:nf]
            if np.any(np.all(fr <= p, axis=1) & np.any(fr < p, axis=1)):
                continue
        front[nf] = p
        nf += 1
        members.append(int(idx[j]))
    mask[members] = True
    return mask


def non_dominated_ranks(F, *, max_rank: int | None = None) -> np.ndarray:
    """Front number of every row of F (minimised): 0 for the Pareto front.

    Parameters
    ----------
    F : array_like, shape (n, k)
    max_rank : int, optional
        Stop after this many fronts; rows left get ``max_rank``.

    Returns
    -------
    ndarray of int, shape (n,)
        Rows with a NaN get -1.
    """
    F = np.asarray(F, dtype=float)
    n = F.shape[0]
    ranks = np.full(n, -1, dtype=int)
    left = np.flatnonzero(~np.isnan(F).any(axis=1))
    r = 0
    while left.size:
        if max_rank is not None and r >= max_rank:
            ranks[left] = max_rank
            break
        m = pareto_mask(F[left])
        ranks[left[m]] = r
        left = left[~m]
        r += 1
    return ranks
