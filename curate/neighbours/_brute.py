"""The ``brute`` backend: direct exact distances in blocks of queries, the obvious reference.

It serves every metric, including distances with missing values kept, since
it asks the space itself (:meth:`Space.distances`) for each block.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import TYPE_CHECKING

import numpy as np

from curate.neighbours._plan import Request

if TYPE_CHECKING:
    from curate.space.points import Space

__all__ = ["brute_knn", "brute_radius"]


def _chunk_rows(memory_mb: int, n_ref: int) -> int:
    budget = memory_mb * 2**20 / 4  # several temporaries per block
    return max(1, min(8192, int(budget // max(1, n_ref * 8))))


def _brute_blocks(space: Space, req: Request) -> Iterator[tuple[int, np.ndarray]]:
    """Yield (start, distances) per block of queries; the query's own row set to inf."""
    step = _chunk_rows(space.engine.memory_mb, len(req.reference))
    for start in range(0, len(req.queries), step):
        rows = np.arange(start, min(len(req.queries), start + step))
        dist = space.distances(req.queries[rows], req.reference)
        own = req.self_index[rows]
        dist[np.flatnonzero(own >= 0), own[own >= 0]] = np.inf
        yield start, dist


def brute_knn(space: Space, req: Request, k: int) -> tuple[np.ndarray, np.ndarray]:
    """The ``k`` nearest reference rows per query, ties to the lower position."""
    out_d = np.empty((len(req.queries), k))
    out_i = np.empty((len(req.queries), k), dtype=np.int64)
    for start, dist in _brute_blocks(space, req):
        kth = np.partition(dist, k - 1, axis=1)[:, k - 1:k]
        rows, cols = np.nonzero(dist <= kth)  # the k nearest and every row tied with the k-th
        order = np.lexsort((cols, dist[rows, cols], rows))
        first = np.searchsorted(rows[order], np.arange(len(dist)))
        take = order[first[:, None] + np.arange(k)]
        out_d[start:start + len(dist)] = dist[rows[take], cols[take]]
        out_i[start:start + len(dist)] = req.reference[cols[take]]
    return out_d, out_i


def brute_radius(space: Space, req: Request, radius: float
                 ) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """Reference rows within ``radius`` per query, by distance then position."""
    dists: list[np.ndarray] = []
    idx: list[np.ndarray] = []
    for _, dist in _brute_blocks(space, req):
        rows, cols = np.nonzero(dist <= radius)
        order = np.lexsort((cols, dist[rows, cols], rows))
        bounds = np.searchsorted(rows[order], np.arange(len(dist) + 1))
        for row in range(len(dist)):
            pick = order[bounds[row]:bounds[row + 1]]
            dists.append(dist[row, cols[pick]])
            idx.append(req.reference[cols[pick]])
    return dists, idx
