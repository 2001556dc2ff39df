"""The k-nearest-neighbour engine every stage uses.

One interface: neighbours of query rows among reference rows of a
:class:`~curate.space.Space`, optionally excluding each query row itself,
distances returned, ties in distance broken by the lower position so that
results never depend on the backend or the chunk size.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
from scipy.spatial.distance import cdist

if TYPE_CHECKING:
    from curate.space import Space

__all__ = ["kneighbors", "radius_neighbors"]

_SCIPY_METRIC = {"euclidean": "euclidean", "manhattan": "cityblock"}


def _positions(space: Space, which: np.ndarray | None) -> np.ndarray:
    if which is None:
        return np.arange(space.n, dtype=np.int64)
    return np.asarray(which, dtype=np.int64)


def _chunk_rows(space: Space, n_ref: int) -> int:
    budget = space.engine.memory_mb * 2**20 / 4  # several temporaries per block
    return max(1, min(8192, int(budget // max(1, n_ref * 8))))


def kneighbors(space: Space, k: int, *, queries: np.ndarray | None = None,
               reference: np.ndarray | None = None,
               exclude_self: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """Return distances and positions of the ``k`` nearest reference rows of each query.

    Parameters
    ----------
    space : Space
        The rows and their distance.
    k : int
        Neighbours per query; fewer reference rows than ``k`` is an error.
    queries, reference : array of positions, optional
        Positions in ``space``; all rows when omitted.
    exclude_self : bool
        Leave out the reference row at the query's own position.

    Returns
    -------
    (distances, positions) : two ``(len(queries), k)`` arrays, nearest first,
        ties in distance ordered by position.

    Examples
    --------
    >>> from curate.space import Space
    >>> s = Space.from_matrix([[0.0], [1.0], [3.0], [4.0]])
    >>> d, i = kneighbors(s, 2)
    >>> i.tolist()
    [[1, 2], [0, 2], [3, 1], [2, 1]]
    """
    q = _positions(space, queries)
    r = _positions(space, reference)
    available = len(r) - (1 if exclude_self else 0)
    if k > available:
        raise ValueError(f"asked for {k} neighbours among {available} rows")
    out_d = np.empty((len(q), k), dtype=np.float64)
    out_i = np.empty((len(q), k), dtype=np.int64)
    step = _chunk_rows(space, len(r))
    for start in range(0, len(q), step):
        block = q[start:start + step]
        dist = space.distances(block, r)
        if exclude_self:
            dist[block[:, None] == r[None, :]] = np.inf
        # A stable sort on distance keeps position order among ties, because r is ascending.
        order = np.argsort(dist, axis=1, kind="stable")[:, :k] if np.all(np.diff(r) > 0) else \
            np.lexsort((np.broadcast_to(r, dist.shape), dist), axis=1)[:, :k]
        out_i[start:start + step] = r[order]
        out_d[start:start + step] = np.take_along_axis(dist, order, axis=1)
    return out_d, out_i


def radius_neighbors(space: Space, radius: float, *, queries: np.ndarray | None = None,
                     reference: np.ndarray | None = None,
                     exclude_self: bool = True) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """Return, per query, distances and positions of reference rows within ``radius``.

    Rows at exactly ``radius`` count as inside. Each list is ordered by
    distance, then position.

    Examples
    --------
    >>> from curate.space import Space
    >>> s = Space.from_matrix([[0.0], [1.0], [3.0]])
    >>> d, i = radius_neighbors(s, 1.0)
    >>> [x.tolist() for x in i]
    [[1], [0], []]
    """
    q = _positions(space, queries)
    r = _positions(space, reference)
    dists: list[np.ndarray] = []
    idx: list[np.ndarray] = []
    step = _chunk_rows(space, len(r))
    for start in range(0, len(q), step):
        block = q[start:start + step]
        dist = space.distances(block, r)
        if exclude_self:
            dist[block[:, None] == r[None, :]] = np.inf
        for row in range(len(block)):
            hit = np.flatnonzero(dist[row] <= radius)
            order = np.lexsort((r[hit], dist[row, hit]))
            idx.append(r[hit][order])
            dists.append(dist[row, hit][order])
    return dists, idx


def pairwise(matrix_a: np.ndarray, matrix_b: np.ndarray, metric: str) -> np.ndarray:
    """Exact distances between two blocks of rows, by direct differences."""
    return cdist(matrix_a, matrix_b, metric=_SCIPY_METRIC[metric])
