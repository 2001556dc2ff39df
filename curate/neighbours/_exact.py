"""Exact distances and the final ranking that every backend shares.

Fast backends only propose candidates; the distances returned to callers are
always computed here, by direct differences in float64 with the same order of
operations as :func:`scipy.spatial.distance.cdist` (a sequential sum over the
columns, then a square root for Euclidean distance), so they are bitwise the
values that the reference computation gives, and ties are exact ties.
"""

from __future__ import annotations

import numpy as np

from curate.neighbours.jit import compiled

__all__ = ["exact_pairs", "rank_pairs", "rerank_fixed"]


@compiled(nogil=True, inline="always")
def _direct(matrix: np.ndarray, a: int, b: int, manhattan: bool) -> float:
    s = 0.0
    for c in range(matrix.shape[1]):
        diff = matrix[a, c] - matrix[b, c]
        if manhattan:
            s += abs(diff)
        else:
            s += diff * diff
    return s if manhattan else np.sqrt(s)


@compiled(nogil=True)
def _exact_pairs(matrix: np.ndarray, qpos: np.ndarray, rpos: np.ndarray,
                 manhattan: bool) -> np.ndarray:
    out = np.empty(len(qpos), dtype=np.float64)
    for i in range(len(qpos)):
        out[i] = _direct(matrix, qpos[i], rpos[i], manhattan)
    return out


def exact_pairs(matrix: np.ndarray, qpos: np.ndarray, rpos: np.ndarray, metric: str) -> np.ndarray:
    """Exact distances between rows ``qpos[i]`` and ``rpos[i]`` of ``matrix``.

    Examples
    --------
    >>> m = np.array([[0.0, 0.0], [3.0, 4.0]])
    >>> exact_pairs(m, np.array([0, 0]), np.array([1, 0]), "euclidean").tolist()
    [5.0, 0.0]
    """
    return _exact_pairs(matrix, np.asarray(qpos, np.int64), np.asarray(rpos, np.int64),
                        metric == "manhattan")


@compiled(nogil=True)
def _rerank(matrix: np.ndarray, qpos: np.ndarray, reference: np.ndarray, cand: np.ndarray,
            k: int, lower: np.ndarray, manhattan: bool, out_d: np.ndarray, out_i: np.ndarray,
            ok: np.ndarray) -> None:
    width = cand.shape[1]
    dist = np.empty(width, dtype=np.float64)
    idx = np.empty(width, dtype=np.int64)
    for row in range(cand.shape[0]):
        count = 0
        for slot in range(width):
            j = cand[row, slot]
            if j < 0:
                continue
            d = _direct(matrix, qpos[row], reference[j], manhattan)
            # insertion by (distance, index): the index order is the position order
            at = count
            while at > 0 and (dist[at - 1] > d or (dist[at - 1] == d and idx[at - 1] > j)):
                dist[at] = dist[at - 1]
                idx[at] = idx[at - 1]
                at -= 1
            dist[at] = d
            idx[at] = j
            count += 1
        for slot in range(k):
            out_d[row, slot] = dist[slot]
            out_i[row, slot] = reference[idx[slot]]
        ok[row] = count >= k and dist[k - 1] < lower[row]


def rerank_fixed(matrix: np.ndarray, qpos: np.ndarray, reference: np.ndarray, cand: np.ndarray,
                 k: int, lower: np.ndarray, metric: str
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Rank each row's candidates exactly and say whether the ranking is proven.

    ``cand`` holds indices into ``reference`` (-1 for none). ``lower[i]`` is
    a lower bound on the exact distance of every reference row of query ``i``
    that is *not* a candidate. The top ``k`` are certain when the k-th exact
    distance is strictly below it: no outside row can then be closer or tie.

    Examples
    --------
    >>> m = np.array([[0.0], [1.0], [2.0], [5.0]])
    >>> d, i, ok = rerank_fixed(m, np.array([0]), np.arange(4), np.array([[2, 1, -1]]), 2,
    ...                         np.array([4.0]), "euclidean")
    >>> i.tolist(), d.tolist(), ok.tolist()
    ([[1, 2]], [[1.0, 2.0]], [True])
    """
    rows = len(cand)
    out_d = np.empty((rows, k), dtype=np.float64)
    out_i = np.empty((rows, k), dtype=np.int64)
    ok = np.empty(rows, dtype=np.bool_)
    _rerank(matrix, np.asarray(qpos, np.int64), reference, np.ascontiguousarray(cand, np.int64),
            k, np.asarray(lower, np.float64), metric == "manhattan", out_d, out_i, ok)
    return out_d, out_i, ok


def rank_pairs(matrix: np.ndarray, metric: str, qpos: np.ndarray, reference: np.ndarray,
               rows: np.ndarray, idx: np.ndarray, n_rows: int
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Exact distances of candidate pairs, sorted by row, then distance, then position.

    ``rows[i]`` is a query index and ``idx[i]`` an index into ``reference``.
    Returns ``(starts, distances, positions)`` where row ``r``'s ranked
    neighbours are ``starts[r]:starts[r + 1]``.

    Examples
    --------
    >>> m = np.array([[0.0], [2.0], [1.0]])
    >>> s, d, p = rank_pairs(m, "euclidean", np.array([0]), np.arange(3), np.array([0, 0]),
    ...                      np.array([1, 2]), 1)
    >>> s.tolist(), d.tolist(), p.tolist()
    ([0, 2], [1.0, 2.0], [2, 1])
    """
    rows = np.asarray(rows, np.int64)
    idx = np.asarray(idx, np.int64)
    dist = exact_pairs(matrix, qpos[rows], reference[idx], metric)
    order = np.lexsort((idx, dist, rows))
    starts = np.searchsorted(rows[order], np.arange(n_rows + 1))
    return starts, dist[order], reference[idx[order]]
