"""Both directions of an update's neighbour search in one pass over the pairs.

When rows enter a stage, each needs its own k nearest rows (forward), and
each older row needs to know whether an entering row is nearer than its k-th
neighbour (reverse). Both read the same distances, entering rows x stage
rows, so one matrix product per tile serves both, as in the symmetric
self-search of :mod:`._fast`: the tile holds ``-2 a.b`` (a an entering row, b
a stage row), the forward side ranks b by ``|b|^2 - 2 a.b`` and keeps the best
candidates, the reverse side collects the pair when ``|a|^2 - 2 a.b`` is
within b's own bound (its k-th distance, squared, less ``|b|^2``). Both use
the rounding bound of :mod:`._fast` (a length-d float32 product plus one
rounded addition), so the forward candidates are ranked and certified exactly
as a fast query's are, and no reverse pair within the bound is lost: the
caller checks them with exact distances.
"""

from __future__ import annotations

import numpy as np

from curate.neighbours._fast import (
    RELATIVE,
    TINY32,
    U32,
    _augment,
    _finish,
    _frame,
    _one_blas_thread,
    _queries,
)
from curate.neighbours._kernels import _insert
from curate.neighbours._plan import Plan, make_request, run_tasks
from curate.neighbours.jit import compiled

__all__ = ["cross_search"]


@compiled(nogil=True)
def _scan_cross(tile: np.ndarray, r0: int, j0: int, row_norms: np.ndarray,
                col_norms: np.ndarray, own: np.ndarray, vals: np.ndarray, idx: np.ndarray,
                thr: np.ndarray, col_thr: np.ndarray, out_r: np.ndarray, out_j: np.ndarray,
                count: int) -> int:  # pragma: no cover - compiled
    """One tile, both sides: rows ``r0 + r`` keep their best columns; columns ``j0 + j``
    collect rows within their bound. The output has room for every pair of the tile."""
    width = tile.shape[1]
    norms = col_norms[j0:j0 + width]  # 1-d views: the loops below vectorise only on these
    bounds = col_thr[j0:j0 + width]
    for r in range(tile.shape[0]):
        a = r0 + r
        row = tile[r]
        t = thr[a]
        below = False
        for j in range(width):  # vectorised
            below |= row[j] + norms[j] < t
        if below:
            for j in range(width):
                v = row[j] + norms[j]
                if v < t and j0 + j != own[a]:
                    t = _insert(vals, idx, a, v, j0 + j)
            thr[a] = t
        na = row_norms[a]
        near = False
        for j in range(width):  # vectorised: each column against its own bound
            near |= row[j] + na <= bounds[j]
        if near:
            for j in range(width):
                if row[j] + na <= bounds[j] and j0 + j != own[a]:
                    out_r[count] = a
                    out_j[count] = j0 + j
                    count += 1
    return count


def _column_bounds(radii: np.ndarray, norms: np.ndarray, rmax: float, dims: int) -> np.ndarray:
    """Per reference row, the float32 scan value within which a row may lie inside its radius
    (-inf for rows with no radius): the bound of :func:`._fast._scan_bound`, rows for queries."""
    bound = (2 * (dims + 1) + 8) * (U32 * (np.sqrt(norms) + rmax) ** 2 + TINY32)
    with np.errstate(over="ignore", invalid="ignore"):
        value = np.where(radii >= 0, radii * radii * (1 + RELATIVE) - norms + bound, -np.inf)
    low = value.astype(np.float32)  # rounded up, so that no value at the bound is lost
    return np.where(low.astype(np.float64) < value, np.nextafter(low, np.float32(np.inf)), low)


def cross_search(matrix: np.ndarray, queries: np.ndarray, reference: np.ndarray, k: int,
                 radii: np.ndarray, plan: Plan
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Euclidean: each query's exact k nearest reference rows (itself left out), and every
    (query, reference row) pair that may lie within the reference row's ``radii`` entry
    (negative: none) — candidates to check exactly. ``reference`` is ascending and
    ``radii`` runs parallel to it.

    Returns ``(dist, pos, pair_query_index, pair_reference_position)``.

    Examples
    --------
    >>> from curate.neighbours._plan import plan_for
    >>> m = np.array([[0.0], [1.0], [3.0], [1.2]])
    >>> d, p, q, r = cross_search(m, np.array([3]), np.arange(4), 1, np.array([1.5, 1.0, -1, -1]),
    ...                           plan_for(64, 1, 4, 1, 1))
    >>> p.tolist(), q.tolist(), r.tolist()
    ([[1]], [0, 0], [0, 1])
    """
    req = make_request(matrix, "euclidean", queries, reference, True)
    frame = _frame(req, plan)
    qa, qn, bound = _queries(req, frame)
    ra, rn = _augment(req, req.reference, frame, query=False)
    cols = np.ascontiguousarray(ra[:, :-1])
    col_norms = rn.astype(np.float32)
    col_thr = _column_bounds(np.asarray(radii, np.float64), rn, frame.rmax, req.dims)
    n = len(req.queries)
    vals = np.full((n, plan.width), np.inf, dtype=np.float32)
    idx = np.full((n, plan.width), -1, dtype=np.int64)
    thr = np.full(n, np.inf, dtype=np.float32)
    row_norms = qn.astype(np.float32)
    minus2a = np.ascontiguousarray(qa[:, :-1])

    def task(r0: int) -> tuple[np.ndarray, np.ndarray]:
        rows = minus2a[r0:r0 + plan.block]
        room = len(rows) * plan.tile
        out_r, out_j = np.empty(room, np.int64), np.empty(room, np.int64)
        found_r, found_j = [], []
        for j0 in range(0, len(cols), plan.tile):
            values = rows @ cols[j0:j0 + plan.tile].T
            count = _scan_cross(values, r0, j0, row_norms, col_norms, req.self_index, vals,
                                idx, thr, col_thr, out_r, out_j, 0)
            if count:
                found_r.append(out_r[:count].copy())
                found_j.append(out_j[:count].copy())
        empty = np.zeros(0, np.int64)
        return (np.concatenate(found_r) if found_r else empty,
                np.concatenate(found_j) if found_j else empty)

    with _one_blas_thread():
        parts = run_tasks(plan.threads, range(0, n, plan.block), task)
        dist, pos = _finish(req, frame, plan, k, qa, qn, bound, idx, thr)
    pair_q = np.concatenate([p[0] for p in parts]) if parts else np.zeros(0, np.int64)
    pair_r = np.concatenate([p[1] for p in parts]) if parts else np.zeros(0, np.int64)
    return dist, pos, pair_q, req.reference[pair_r]
