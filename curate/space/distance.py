"""Exact distances between rows: plain Lp distance, and the definition with missing values.

Both compute like :func:`scipy.spatial.distance.cdist` (they call it), so they
are the reference every neighbour backend's distances are ranked by.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial.distance import cdist

__all__ = ["SCIPY_METRIC", "masked_distances", "pairwise"]

SCIPY_METRIC = {"euclidean": "euclidean", "manhattan": "cityblock"}


def pairwise(matrix_a: np.ndarray, matrix_b: np.ndarray, metric: str) -> np.ndarray:
    """Exact distances between two blocks of rows, by direct differences.

    Examples
    --------
    >>> pairwise(np.array([[0.0, 0.0]]), np.array([[3.0, 4.0]]), "manhattan").tolist()
    [[7.0]]
    """
    return cdist(matrix_a, matrix_b, metric=SCIPY_METRIC[metric])


def masked_distances(matrix: np.ndarray, groups: np.ndarray, gaps: np.ndarray,
                     cost: np.ndarray, a: np.ndarray, b: np.ndarray,
                     manhattan: bool = False) -> np.ndarray:
    """Exact distances when some values are missing: 1 (times weight) per gap.

    ``groups[j]`` is the attribute of embedded dimension ``j``; ``gaps`` is the
    ``(n, attributes)`` missing mask; ``cost[g]`` is what attribute ``g`` adds
    when it is missing in either row (its weight: a weighted distance of 1,
    squared or not). Attributes present in both rows add their embedded part.

    Examples
    --------
    >>> m = np.array([[0.0, 0.2], [0.0, 0.5], [0.0, 0.0]])
    >>> gaps = np.array([[True, False], [False, False], [False, False]])
    >>> d = masked_distances(m, np.array([0, 1]), gaps, np.ones(2), np.array([0]), np.arange(3))
    >>> d.round(4).tolist()
    [[1.0, 1.044, 1.0198]]
    """
    ga, gb = gaps[a], gaps[b]
    xa, xb = matrix[a], matrix[b]
    gappy = np.flatnonzero(ga.any(axis=0) | gb.any(axis=0))
    kind = "cityblock" if manhattan else "sqeuclidean"
    clean = ~np.isin(groups, gappy)
    total = cdist(xa[:, clean], xb[:, clean], kind) if clean.any() \
        else np.zeros((len(a), len(b)))
    for g in gappy:
        dims = groups == g
        # An attribute may have no dimension at all (a column with every value missing).
        part = cdist(xa[:, dims], xb[:, dims], kind) if dims.any() \
            else np.zeros((len(a), len(b)))
        either = ga[:, g][:, None] | gb[:, g][None, :]
        total += np.where(either, cost[g], part)
    return total if manhattan else np.sqrt(total)
