"""The "fast" exact engine: float32 candidates from matrix-product tiles, exact float64 ranking.

Euclidean distance: centred rows are rounded to float32 and augmented so that
one matrix product per tile gives ``|r|^2 - 2 q.r`` (the query's own ``|q|^2``
is the same along a row, so it can be left out of the ranking). A compiled
scan keeps each query's ``width`` best candidates; the candidates are then
ranked by exact float64 distance. The float32 values carry a rounding error
bounded by ``c * u * (|q| + max|r|)^2`` (Higham, *Accuracy and Stability of
Numerical Algorithms*, 2002, section 3.1: inner products in floating point,
with ``u = 2**-24`` and ``c = 2(d + 1) + 8``, about twice the bound for a
length ``d + 1`` product plus the rounding of the inputs). A query whose k-th
exact distance is not strictly below every outside candidate's lower bound is
searched again: every reference row whose float32 value could be within the
k-th distance is collected and ranked exactly, so the result is always exact.

A self-search (every row a query among all rows, itself left out) computes
each pair once: the product ``-2 a.b`` of one tile serves row a (adding
``|b|^2``) and row b (adding ``|a|^2``), so only the tiles on and above the
diagonal are computed. Each thread keeps its own candidate lists, merged at
the end by (value, index); the same error bound applies, since each value is
again a length-``d`` product plus one rounded addition.

Manhattan distance has no product form: the scans compute exact float64
distances tile by tile, with no second step.
"""

from __future__ import annotations

import contextlib
import threading
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import TypeVar

import numpy as np
from threadpoolctl import threadpool_limits

from curate.neighbours._exact import rank_pairs, rerank_fixed
from curate.neighbours._kernels import collect_tile, l1_collect, l1_scan, merge_lists, scan_pair, scan_tile
from curate.neighbours._plan import Plan, Request, run_tasks

__all__ = ["fast_kneighbors", "fast_radius"]

T = TypeVar("T")
U32 = 2.0**-24
TINY32 = 2.0**-126  # float32's smallest normal number: bounds what underflow can lose
RELATIVE = 1e-9  # covers float64 rounding of the exact distances (about d * 2**-53)


@dataclass(frozen=True)
class _Frame:
    """Centre of the reference rows, their largest centred norm (for the error bound), and
    the rows converted at a time (bounds the float64 temporaries)."""

    mean: np.ndarray
    rmax: float
    piece: int


def _frame(req: Request, plan: Plan) -> _Frame:
    dims, ref, piece = req.dims, req.reference, plan.block
    if req.metric != "euclidean" or len(ref) == 0:
        return _Frame(np.zeros(dims), 0.0, piece)
    total = np.zeros(dims)
    for lo in range(0, len(ref), piece):
        total += req.matrix[ref[lo:lo + piece]].sum(axis=0)
    mean = total / len(ref)
    rmax = 0.0
    for lo in range(0, len(ref), piece):
        y = req.matrix[ref[lo:lo + piece]] - mean
        rmax = max(rmax, float(np.sqrt(np.einsum("ij,ij->i", y, y).max())))
    return _Frame(mean, rmax, piece)


def _augment(req: Request, positions: np.ndarray, frame: _Frame,
             query: bool) -> tuple[np.ndarray, np.ndarray]:
    """Centred rows in float32, augmented, and their squared norms (float64).

    Queries become ``[-2a, 1]`` and reference rows ``[b, |b|^2]``, so that one
    product gives ``|b|^2 - 2 a.b`` (the scaling by -2 is exact).
    """
    out = np.empty((len(positions), req.dims + 1), dtype=np.float32)
    norms = np.empty(len(positions))
    for lo in range(0, len(positions), frame.piece):
        part = slice(lo, lo + frame.piece)
        a = (req.matrix[positions[part]] - frame.mean).astype(np.float32)
        a64 = a.astype(np.float64)
        norms[part] = np.einsum("ij,ij->i", a64, a64)
        out[part, :-1] = -2 * a if query else a
        out[part, -1] = 1 if query else norms[part]
    return out, norms


def _slab(req: Request, frame: _Frame, lo: int, hi: int) -> np.ndarray:
    positions = req.reference[lo:hi]
    if req.metric == "euclidean":
        return _augment(req, positions, frame, query=False)[0]
    out = np.empty((req.dims, len(positions)))  # Manhattan: transposed, exact float64
    for at in range(0, len(positions), frame.piece):
        out[:, at:at + frame.piece] = req.matrix[positions[at:at + frame.piece]].T
    return out


def _queries(req: Request, frame: _Frame) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Augmented float32 queries, their squared norms, and each query's error bound."""
    if req.metric != "euclidean":
        empty = np.zeros(len(req.queries))
        return np.empty((0, req.dims + 1), dtype=np.float32), empty, empty
    qa, qn = _augment(req, req.queries, frame, query=True)
    bound = (2 * (req.dims + 1) + 8) * (U32 * (np.sqrt(qn) + frame.rmax) ** 2 + TINY32)
    return qa, qn, bound


def _one_blas_thread() -> contextlib.AbstractContextManager[object]:
    """One BLAS thread per product: our threads share the cores, and BLAS's own threads
    slow small products down badly on a busy machine (measured: 100 x 1,000 rows took
    32 ms with two BLAS threads and 4 ms with one). Setting the limit costs about 2 ms,
    which is why small queries go to brute force."""
    return threadpool_limits(limits=1, user_api="blas")


def _run(n_rows: int, plan: Plan, task: Callable[[int], T]) -> list[T]:
    """Run ``task(start)`` for every block of rows, on ``plan.threads`` threads."""
    return run_tasks(plan.threads, range(0, n_rows, plan.block), task)


def _gemm_tiles(qa: np.ndarray, slab: np.ndarray, tile: int) -> Iterator[tuple[int, np.ndarray]]:
    """Yield ``(j0, values)`` for each tile of the slab: one float32 product per tile."""
    buf = np.empty((len(qa), tile), dtype=np.float32)
    for j0 in range(0, len(slab), tile):
        j1 = min(len(slab), j0 + tile)
        out = buf if j1 - j0 == tile else np.empty((len(qa), j1 - j0), dtype=np.float32)
        np.matmul(qa, slab[j0:j1].T, out=out)
        yield j0, out


def _best(req: Request, frame: _Frame, plan: Plan, qa: np.ndarray
          ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Each query's ``plan.width`` best candidates over all slabs, and its final threshold."""
    n = len(req.queries)
    dtype = np.float32 if req.metric == "euclidean" else np.float64
    vals = np.full((n, plan.width), np.inf, dtype=dtype)
    idx = np.full((n, plan.width), -1, dtype=np.int64)
    thr = np.full(n, np.inf, dtype=dtype)
    for lo in range(0, len(req.reference), plan.slab):
        hi = min(len(req.reference), lo + plan.slab)
        slab = _slab(req, frame, lo, hi)

        def task(s: int, lo: int = lo, slab: np.ndarray = slab) -> None:
            r = slice(s, min(n, s + plan.block))
            if req.metric == "manhattan":
                l1_scan(req.matrix, req.queries[r], slab, lo, req.self_index[r], vals[r],
                        idx[r], thr[r], plan.tile)
                return
            for j0, values in _gemm_tiles(qa[r], slab, plan.tile):
                scan_tile(values, lo + j0, req.self_index[r], vals[r], idx[r], thr[r])

        _run(n, plan, task)
    return vals, idx, thr


def _collect_block(req: Request, frame: _Frame, plan: Plan, qa: np.ndarray, thr: np.ndarray,
                   s: int, lo: int, slab: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    r = slice(s, min(len(req.queries), s + plan.block))
    out_r = np.empty(4 * plan.block, dtype=np.int64)
    out_j = np.empty(4 * plan.block, dtype=np.int64)
    count = 0
    pieces = [(0, slab)] if req.metric == "manhattan" else _gemm_tiles(qa[r], slab, plan.tile)
    for j0, values in pieces:
        while True:  # retry the piece with more room: writes are idempotent
            if req.metric == "manhattan":
                new = l1_collect(req.matrix, req.queries[r], values, lo, req.self_index[r],
                                 thr[r], s, plan.tile, out_r, out_j, count)
            else:
                new = collect_tile(values, lo + j0, req.self_index[r], thr[r], s, out_r, out_j,
                                   count)
            if new >= 0:
                count = new
                break
            out_r = np.concatenate([out_r[:count], np.empty(2 * len(out_r), np.int64)])
            out_j = np.concatenate([out_j[:count], np.empty(2 * len(out_j), np.int64)])
    return out_r[:count], out_j[:count]


def _collect(req: Request, frame: _Frame, plan: Plan, qa: np.ndarray, thr: np.ndarray
             ) -> tuple[np.ndarray, np.ndarray]:
    """All (query, reference index) pairs whose scan value is at most the query's ``thr``."""
    rows: list[np.ndarray] = []
    cols: list[np.ndarray] = []
    for lo in range(0, len(req.reference), plan.slab):
        hi = min(len(req.reference), lo + plan.slab)
        slab = _slab(req, frame, lo, hi)

        def task(s: int, lo: int = lo, slab: np.ndarray = slab) -> tuple[np.ndarray, np.ndarray]:
            return _collect_block(req, frame, plan, qa, thr, s, lo, slab)

        for r, j in _run(len(req.queries), plan, task):
            rows.append(r)
            cols.append(j)
    if not rows:
        return np.empty(0, np.int64), np.empty(0, np.int64)
    return np.concatenate(rows), np.concatenate(cols)


def _scan_bound(req: Request, qn: np.ndarray, bound: np.ndarray, dist: np.ndarray) -> np.ndarray:
    """Per query, the scan value below which every row within ``dist`` must fall."""
    if req.metric == "manhattan":
        return dist.astype(np.float64)
    with np.errstate(over="ignore", invalid="ignore"):
        return dist * dist * (1 + RELATIVE) - qn + bound


def _scan_dtype(req: Request, thr: np.ndarray) -> np.ndarray:
    """Thresholds in the scan's precision, rounded up so that no value at the bound is lost."""
    if req.metric != "euclidean":
        return thr.astype(np.float64)
    low = thr.astype(np.float32)
    return np.where(low.astype(np.float64) < thr, np.nextafter(low, np.float32(np.inf)), low)


def _symmetric(req: Request, plan: Plan) -> bool:
    """Whether the request is a whole self-search whose per-thread lists fit the budget."""
    n = len(req.queries)
    if req.metric != "euclidean" or n != len(req.reference) or n < 2:
        return False
    # per thread: its lists (float32 values, int64 indices, threshold) and one tile;
    # shared: the augmented rows, their norms and error bounds
    need = plan.threads * (n * (plan.width * 12 + 4) + plan.tile ** 2 * 4) + \
        n * ((req.dims + 1) * 4 + 24)
    return (need <= plan.memory_mb * 2**20
            and bool(np.array_equal(req.queries, req.reference))
            and bool(np.array_equal(req.self_index, np.arange(n))))


def _best_symmetric(req: Request, plan: Plan, qa: np.ndarray, qn: np.ndarray
                    ) -> tuple[np.ndarray, np.ndarray]:
    """Each row's ``plan.width`` best candidates and threshold, every pair computed once."""
    n, size = len(req.queries), plan.tile
    norms = qn.astype(np.float32)  # |a|^2, rounded as the product's last column would be
    lists: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    local = threading.local()
    lock = threading.Lock()

    def task(i0: int) -> None:
        if not hasattr(local, "lists"):
            local.lists = (np.full((n, plan.width), np.inf, dtype=np.float32),
                           np.full((n, plan.width), -1, dtype=np.int64),
                           np.full(n, np.inf, dtype=np.float32))
            with lock:
                lists.append(local.lists)
        vals, idx, thr = local.lists
        minus2a = np.ascontiguousarray(qa[i0:i0 + size, :-1])  # -2a, exact in float32
        buf = np.empty((len(minus2a), size), dtype=np.float32)
        for j0 in range(i0, n, size):
            b = qa[j0:j0 + size, :-1] * np.float32(-0.5)  # the rows b themselves, exact
            out = buf if len(b) == size else np.empty((len(minus2a), len(b)), dtype=np.float32)
            np.matmul(minus2a, b.T, out=out)
            scan_pair(out, i0, j0, norms, vals, idx, thr, j0 == i0)

    run_tasks(plan.threads, range(0, n, size), task)
    vals, idx, thr = lists[0]
    for other_vals, other_idx, _ in lists[1:]:
        merge_lists(vals, idx, thr, other_vals, other_idx)
    return idx, thr


def _finish(req: Request, frame: _Frame, plan: Plan, k: int, qa: np.ndarray, qn: np.ndarray,
            bound: np.ndarray, idx: np.ndarray, thr: np.ndarray
            ) -> tuple[np.ndarray, np.ndarray]:
    """Rank the candidates exactly; search again, wider, for queries not proven complete."""
    lower = _lower(req, thr, qn, bound)
    d, i, ok = rerank_fixed(req.matrix, req.queries, req.reference, idx, k, lower, req.metric)
    bad = np.flatnonzero(~ok)
    if len(bad):
        d[bad], i[bad] = _widen(req.rows(bad), frame, plan, qa[bad],
                                _scan_bound(req, qn[bad], bound[bad], d[bad, k - 1]), k)
    return d, i


def fast_kneighbors(req: Request, k: int, plan: Plan) -> tuple[np.ndarray, np.ndarray]:
    """Exact k nearest reference rows of each query (see the module notes).

    Examples
    --------
    >>> from curate.neighbours._plan import make_request, plan_for
    >>> req = make_request(np.array([[0.0], [1.0], [3.0], [4.0]]), "euclidean", None, None, True)
    >>> d, i = fast_kneighbors(req, 2, plan_for(64, 4, 4, 1, 2))
    >>> i.tolist()
    [[1, 2], [0, 2], [3, 1], [2, 1]]
    """
    frame = _frame(req, plan)
    out_d = np.empty((len(req.queries), k))
    out_i = np.empty((len(req.queries), k), dtype=np.int64)
    with _one_blas_thread():
        if _symmetric(req, plan):
            qa, qn, bound = _queries(req, frame)
            idx, thr = _best_symmetric(req, plan, qa, qn)
            return _finish(req, frame, plan, k, qa, qn, bound, idx, thr)
        step = plan.rows
        for q0 in range(0, len(req.queries), step):
            rows = np.arange(q0, min(len(req.queries), q0 + step))
            sub = req.rows(rows)
            qa, qn, bound = _queries(sub, frame)
            _, idx, thr = _best(sub, frame, plan, qa)
            out_d[rows], out_i[rows] = _finish(sub, frame, plan, k, qa, qn, bound, idx, thr)
    return out_d, out_i


def _lower(req: Request, thr: np.ndarray, qn: np.ndarray, bound: np.ndarray) -> np.ndarray:
    """A lower bound on the exact distance of every row left out of a query's candidates."""
    t = thr.astype(np.float64)
    if req.metric == "manhattan":
        # exact values, scanned in position order: the buffer holds the best rows by
        # (distance, position), so its first k are the answer
        return np.full(len(t), np.inf)
    with np.errstate(invalid="ignore"):
        low = np.sqrt(np.maximum(t + qn - bound, 0.0)) * (1 - RELATIVE)
    return np.where(np.isinf(t), np.inf, low)


def _widen(req: Request, frame: _Frame, plan: Plan, qa: np.ndarray, thr: np.ndarray, k: int
           ) -> tuple[np.ndarray, np.ndarray]:
    """Exact k nearest for queries whose candidate set was not proven complete."""
    rows, cols = _collect(req, frame, plan, qa, _scan_dtype(req, thr))
    starts, dist, pos = rank_pairs(req.matrix, req.metric, req.queries, req.reference, rows,
                                   cols, len(req.queries))
    take = starts[:-1, None] + np.arange(k)
    return dist[take], pos[take]


def fast_radius(req: Request, radius: float, plan: Plan) -> tuple[list[np.ndarray],
                                                                   list[np.ndarray]]:
    """Reference rows within ``radius`` (inclusive) of each query, by distance then position.

    Examples
    --------
    >>> from curate.neighbours._plan import make_request, plan_for
    >>> req = make_request(np.array([[0.0], [1.0], [3.0]]), "euclidean", None, None, True)
    >>> d, i = fast_radius(req, 1.0, plan_for(64, 3, 3, 1, 1))
    >>> [x.tolist() for x in i]
    [[1], [0], []]
    """
    frame = _frame(req, plan)
    dists: list[np.ndarray] = []
    poss: list[np.ndarray] = []
    for q0 in range(0, len(req.queries), plan.rows):
        sub = req.rows(np.arange(q0, min(len(req.queries), q0 + plan.rows)))
        n = len(sub.queries)
        qa, qn, bound = _queries(sub, frame)
        thr = _scan_bound(sub, qn, bound, np.full(n, float(radius)))
        with _one_blas_thread():
            rows, cols = _collect(sub, frame, plan, qa, _scan_dtype(sub, thr))
        starts, dist, pos = rank_pairs(sub.matrix, sub.metric, sub.queries, sub.reference,
                                       rows, cols, n)
        keep = dist <= radius
        counts = np.bincount(np.repeat(np.arange(n), np.diff(starts))[keep], minlength=n)
        bounds = np.concatenate([[0], np.cumsum(counts)])
        dist, pos = dist[keep], pos[keep]
        dists.extend(dist[bounds[i]:bounds[i + 1]] for i in range(n))
        poss.extend(pos[bounds[i]:bounds[i + 1]] for i in range(n))
    return dists, poss
