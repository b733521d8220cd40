"""Non-dominated sorting of designs over two or more objectives.

Point a dominates point b (all objectives minimised) when a <= b in every
objective and a < b in at least one (Pareto dominance). Rank 0 is the
non-dominated set (the Pareto front); rank k is the front of what is left
after removing ranks < k ("non-dominated sorting", Deb et al., NSGA-II).

Two and three objectives are ranked in one sweep for all fronts at once: in
lexicographic order a point can only be dominated by an earlier one, and
whether front k dominates a point is monotone in k, so a binary search over
the fronts places each point (the sweep of Kung et al. [2]; the front
bookkeeping of Jensen [3]): O(n log n) for two objectives, where a front is
summarised by its smallest second objective, and O(n log^2 n) plus staircase
updates for three, where a front keeps its staircase in the last two
objectives. Four or more objectives peel one front at a time; each front is
found by a blocked, vectorised scan in the order of the objective sum (a
dominator always has the smaller sum), comparing each block with the members
found so far; the front alone (`pareto_mask`) uses that scan for three too.

References
----------
.. [1] K. Deb, A. Pratap, S. Agarwal, T. Meyarivan, "A fast and elitist
   multiobjective genetic algorithm: NSGA-II", IEEE Trans. Evolutionary
   Computation 6(2), 2002, Sec. III-A (non-dominated sorting).
.. [2] H. T. Kung, F. Luccio, F. P. Preparata, "On finding the maxima of a set
   of vectors", J. ACM 22(4), 1975 (sort on the first objective, then scan).
.. [3] M. T. Jensen, "Reducing the run-time complexity of multiobjective EAs:
   the NSGA-II and other algorithms", IEEE Trans. Evolutionary Computation
   7(5), 2003, Sec. III (two objectives in O(n log n)).
"""

from __future__ import annotations

from bisect import bisect_left, bisect_right
from collections.abc import Sequence

import numpy as np

__all__ = ["to_minimisation", "pareto_mask", "non_dominated_ranks"]

#: Rows compared at once in the blocked scan (memory per block: block x front x k floats).
_BLOCK = 2048


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


def _as_matrix(F) -> np.ndarray:
    F = np.asarray(F, dtype=float)
    if F.ndim != 2:
        raise ValueError(f"F must have shape (n, k). Got {F.shape}.")
    return F


def _unique_rows(G: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct rows in lexicographic order and, per input row, the index of its distinct row.

    Equal rows never dominate each other, so they share a rank: ranking the
    distinct rows and mapping back handles duplicates exactly.
    """
    U, inverse = np.unique(G, axis=0, return_inverse=True)
    return U, inverse.reshape(-1)


def _mask_2d(U: np.ndarray) -> np.ndarray:
    """Front of distinct rows in lexicographic order (two objectives), vectorised.

    A row is dominated exactly when an earlier row has a second objective <= its own.
    """
    prev_min = np.minimum.accumulate(np.concatenate(([np.inf], U[:-1, 1])))
    return U[:, 1] < prev_min


def _ranks_2d(U: np.ndarray, max_rank: int | None) -> np.ndarray:
    """All front numbers of distinct rows in lexicographic order (two objectives).

    ``last[k]`` is the smallest second objective in front k so far; a row is
    dominated by front k exactly when ``last[k] <= y``, a condition that holds
    for k below the row's rank and fails from it on (domination passes down
    the fronts by transitivity), so ``bisect_right`` finds the rank.
    """
    last: list[float] = []
    out = np.empty(U.shape[0], dtype=np.int64)
    cap = max_rank if max_rank is not None else -1
    for i, y in enumerate(U[:, 1].tolist()):
        k = bisect_right(last, y)
        if k == len(last):
            last.append(y)
        else:
            last[k] = y
        out[i] = k if cap < 0 or k < cap else cap
    return out


def _ranks_3d(U: np.ndarray, max_rank: int | None) -> np.ndarray:
    """All front numbers of distinct rows in lexicographic order (three objectives).

    In lexicographic order an earlier row q dominates a later row p exactly when
    q2 <= p2 and q3 <= p3. Each front keeps its staircase: the members not
    dominated in the (2nd, 3rd) projection, sorted by the 2nd objective with the
    3rd strictly falling, so "does front k dominate p" is one binary search; that
    condition holds below p's rank and fails from it on, so a second binary
    search over the fronts finds the rank (the three-objective sweep of [3]).
    """
    xs: list[list[float]] = []
    ys: list[list[float]] = []
    out = np.empty(U.shape[0], dtype=np.int64)
    cap = max_rank if max_rank is not None else -1

    def dominated(k: int, y: float, z: float) -> bool:
        i = bisect_right(xs[k], y) - 1
        return i >= 0 and ys[k][i] <= z

    for i, (y, z) in enumerate(U[:, 1:3].tolist()):
        lo, hi = 0, len(xs)
        while lo < hi:  # first front that does not dominate (y, z)
            mid = (lo + hi) // 2
            if dominated(mid, y, z):
                lo = mid + 1
            else:
                hi = mid
        k = lo
        if cap >= 0 and k >= cap:
            out[i] = cap
            continue
        out[i] = k
        if k == len(xs):
            xs.append([y])
            ys.append([z])
            continue
        X, Y = xs[k], ys[k]
        j = bisect_left(X, y)
        e = j
        while e < len(X) and Y[e] >= z:  # staircase points (y, z) now dominates in projection
            e += 1
        X[j:e] = [y]
        Y[j:e] = [z]
    return out


def _dominated_by(P: np.ndarray, Q: np.ndarray) -> np.ndarray:
    """For each row of P, whether some row of Q is <= it in every objective.

    Rows of Q distinct from those of P that are <= everywhere dominate them.
    Compared one objective at a time (2-D boolean arrays), in chunks of Q.
    """
    out = np.zeros(P.shape[0], dtype=bool)
    for q0 in range(0, Q.shape[0], 2048):
        Qc = Q[q0:q0 + 2048]
        le = Qc[None, :, 0] <= P[:, 0, None]
        for j in range(1, P.shape[1]):
            le &= Qc[None, :, j] <= P[:, j, None]
        out |= le.any(axis=1)
    return out


def _scan_order(U: np.ndarray) -> np.ndarray:
    """Objective-sum order of distinct lexicographically sorted rows (stable: ties stay lexicographic)."""
    return np.argsort(U.sum(axis=1), kind="stable")


def _mask_nd(U: np.ndarray, *, presorted: bool = False) -> np.ndarray:
    """Front of distinct rows (any number of objectives): blocked scan in objective-sum order.

    A dominator has a smaller objective sum (floating-point addition is
    monotone; ties keep the lexicographic order of `U`, in which a dominator
    also comes first), so scanning in that order, a row is on the front unless
    a front member found before it, or an earlier row of its own block,
    dominates it. ``presorted``: the rows are already in that order.
    """
    n = U.shape[0]
    order = np.arange(n) if presorted else _scan_order(U)
    found: list[np.ndarray] = []
    front = U[:0]
    for start in range(0, n, _BLOCK):
        idx = order[start:start + _BLOCK]
        B = U[idx]
        cand = np.flatnonzero(~_dominated_by(B, front)) if front.shape[0] else np.arange(len(idx))
        if cand.size > 1:
            C = B[cand]
            le = C[None, :, 0] <= C[:, 0, None]  # le[i, j]: row j <= row i in every objective
            for j in range(1, C.shape[1]):
                le &= C[None, :, j] <= C[:, j, None]
            np.fill_diagonal(le, False)
            cand = cand[~le.any(axis=1)]
        if cand.size:
            found.append(idx[cand])
            front = np.concatenate([front, B[cand]])
    mask = np.zeros(n, dtype=bool)
    if found:
        mask[np.concatenate(found)] = True
    return mask


def pareto_mask(F) -> np.ndarray:
    """True for the rows of F (minimised) that no other row dominates.

    Rows with a NaN are never on the front. Equal rows are all kept. Two
    objectives: O(n log n), vectorised; more: a blocked scan of cost
    O(n x front size), vectorised.

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
    F = _as_matrix(F)
    n = F.shape[0]
    mask = np.zeros(n, dtype=bool)
    ok = np.flatnonzero(~np.isnan(F).any(axis=1))
    if ok.size == 0:
        return mask
    U, inv = _unique_rows(F[ok])
    m = _mask_2d(U) if F.shape[1] == 2 else _mask_nd(U) if F.shape[1] > 1 else U[:, 0] == U[0, 0]
    mask[ok] = m[inv]
    return mask


def non_dominated_ranks(F, *, max_rank: int | None = None) -> np.ndarray:
    """Front number of every row of F (minimised): 0 for the Pareto front.

    Parameters
    ----------
    F : array_like, shape (n, k)
    max_rank : int, optional
        Rows on front ``max_rank`` or beyond get ``max_rank`` (three or more
        objectives stop peeling there, which bounds the cost).

    Returns
    -------
    ndarray of int, shape (n,)
        Rows with a NaN get -1.
    """
    F = _as_matrix(F)
    n = F.shape[0]
    ranks = np.full(n, -1, dtype=int)
    ok = np.flatnonzero(~np.isnan(F).any(axis=1))
    if ok.size == 0:
        return ranks
    U, inv = _unique_rows(F[ok])
    if F.shape[1] == 1:
        r = np.searchsorted(np.unique(U[:, 0]), U[:, 0])  # one objective: rank = order of the value
        r = np.minimum(r, max_rank) if max_rank is not None else r
    elif F.shape[1] == 2:
        r = _ranks_2d(U, max_rank)
    elif F.shape[1] == 3:
        r = _ranks_3d(U, max_rank)
    else:
        r = np.full(U.shape[0], -1, dtype=np.int64)
        left = _scan_order(U)  # peeling keeps the scan order: sort once
        k = 0
        while left.size:
            if max_rank is not None and k >= max_rank:
                r[left] = max_rank
                break
            m = _mask_nd(U[left], presorted=True)
            r[left[m]] = k
            left = left[~m]
            k += 1
    ranks[ok] = r[inv]
    return ranks
