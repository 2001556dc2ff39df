"""Reference rows within a distance of each query, the distance given per query.

An update asks the reverse of a neighbour query: which old rows does a new
row enter the neighbour list of? A new row enters row ``o``'s list when it is
nearer than ``o``'s k-th neighbour, so the question is "which new rows lie
within ``radius[o]`` of ``o``", one radius per query row. The compiled
engine answers it as it answers a radius query (float32 candidates from
matrix-product tiles with a proven rounding bound, then exact float64
distances); other metrics, and small queries, take direct distances. The
distances returned are exactly the engine's (see :mod:`curate.neighbours._exact`),
so they compare and tie with neighbour-list distances bit for bit.

:func:`entering_neighbours` asks both questions of rows entering a stage at
once (their own k nearest rows, and the rows they get within the k-th distance
of): with the compiled engine, one pass over the pairs serves both
(:mod:`._cross`); otherwise a k-nearest query and :func:`within`.
"""

from __future__ import annotations

import numpy as np

from curate.neighbours import _fast
from curate.neighbours._cross import cross_search
from curate.neighbours._exact import exact_pairs, rank_pairs
from curate.neighbours._plan import make_request, plan_for
from curate.neighbours.backends import LP_METRICS, SMALL_PAIRS, choose_backend
from curate.neighbours.calls import EngineCall, note
from curate.neighbours.search import kneighbors
from curate.space.points import Space

__all__ = ["entering_neighbours", "within"]

Found = tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]


def within(space: Space, radii: np.ndarray, *, queries: np.ndarray, reference: np.ndarray
           ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Every (query index, reference position, distance) with distance <= ``radii[query]``.

    ``queries`` and ``reference`` are positions in ``space``; a query's own
    position is not left out. The result is ordered by query index, then
    distance, then position.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [3.0], [3.5]])
    >>> q, p, d = within(s, np.array([1.0, 0.4]), queries=np.array([0, 2]),
    ...                  reference=np.array([1, 3]))
    >>> q.tolist(), p.tolist(), d.tolist()
    ([0], [1], [1.0])
    """
    queries = np.asarray(queries, dtype=np.int64)
    reference = np.sort(np.asarray(reference, dtype=np.int64))
    radii = np.asarray(radii, dtype=np.float64)
    if len(queries) == 0 or len(reference) == 0:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty.copy(), np.zeros(0)
    backend, _ = choose_backend(space, len(queries), len(reference))
    small = len(queries) * len(reference) <= SMALL_PAIRS
    if space.metric not in LP_METRICS or backend == "brute" or small:
        return _direct(space, radii, queries, reference)
    return _tiled(space, radii, queries, reference)


def _direct(space: Space, radii: np.ndarray, queries: np.ndarray, reference: np.ndarray
            ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    step = max(1, int(space.engine.memory_mb * 2**20 // 32 // max(1, len(reference))))
    found: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    for lo in range(0, len(queries), step):
        dist = space.distances(queries[lo:lo + step], reference)
        rows, cols = np.nonzero(dist <= radii[lo:lo + step, None])
        found.append((rows + lo, reference[cols], dist[rows, cols]))
    return _ordered(found)


def _tiled(space: Space, radii: np.ndarray, queries: np.ndarray, reference: np.ndarray
           ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    req = make_request(space.matrix, space.metric, queries, reference, False)
    plan = plan_for(space.engine.memory_mb, len(req.queries), len(req.reference), req.dims, 1)
    frame = _fast._frame(req, plan)
    found: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    for q0 in range(0, len(req.queries), plan.rows):
        which = np.arange(q0, min(len(req.queries), q0 + plan.rows))
        sub = req.rows(which)
        qa, qn, bound = _fast._queries(sub, frame)
        thr = _fast._scan_bound(sub, qn, bound, radii[which])
        with _fast._one_blas_thread():
            rows, cols = _fast._collect(sub, frame, plan, qa,
                                              _fast._scan_dtype(sub, thr))
        starts, dist, pos = rank_pairs(sub.matrix, sub.metric, sub.queries, sub.reference,
                                       rows, cols, len(which))
        owner = np.repeat(np.arange(len(which)), np.diff(starts))
        keep = dist <= radii[which][owner]
        found.append((owner[keep] + q0, pos[keep], dist[keep]))
    return _ordered(found)


def _ordered(found: list[tuple[np.ndarray, np.ndarray, np.ndarray]]
             ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    rows = np.concatenate([f[0] for f in found]).astype(np.int64)
    pos = np.concatenate([f[1] for f in found]).astype(np.int64)
    dist = np.concatenate([f[2] for f in found]).astype(np.float64)
    order = np.lexsort((pos, dist, rows))
    return rows[order], pos[order], dist[order]


def entering_neighbours(space: Space, k: int, entering: np.ndarray, radii: np.ndarray) -> Found:
    """The k nearest rows of each ``entering`` row (itself left out), and every (row, entering
    row) pair at distance <= ``radii[row]`` (``radii`` per row of the space; negative: none).

    Returns ``(dist, pos, rows, entering_pos, pair_dist)``, the pairs with exact distances.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [3.0], [1.2]])
    >>> d, p, r, e, pd = entering_neighbours(s, 1, np.array([3]), np.array([1.5, 1.0, -1, -1]))
    >>> p.tolist(), r.tolist(), e.tolist(), pd.round(2).tolist()
    ([[1]], [0, 1], [3, 3], [1.2, 0.2])
    """
    entering = np.asarray(entering, dtype=np.int64)
    backend, reason = choose_backend(space, len(entering), space.n)
    if space.metric == "euclidean" and backend == "fast" and space.engine.cluster_address is None:
        plan = plan_for(space.engine.memory_mb, len(entering), space.n, space.matrix.shape[1], k)
        dist, pos, q, rows = cross_search(space.matrix, entering, np.arange(space.n), k, radii,
                                          plan)
        note(EngineCall(backend, f"{reason}; one pass serves the reverse question too", k,
                        len(entering), space.n))
        d = exact_pairs(space.matrix, rows, entering[q], space.metric)
        keep = d <= radii[rows]
        return dist, pos, rows[keep], entering[q][keep], d[keep]
    dist, pos = kneighbors(space, k, queries=entering)
    asked = np.flatnonzero(radii >= 0)
    q, p, d = within(space, radii[asked], queries=asked, reference=entering)
    return dist, pos, asked[q], p, d
