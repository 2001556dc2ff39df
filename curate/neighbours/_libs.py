"""Exact neighbours from scikit-learn and faiss: their candidates, our exact ranking.

Each library proposes a few more candidates than asked for, with its own
(rounded) distances. The candidates are ranked by exact float64 distance
(:mod:`curate.neighbours._exact`); a query is certain when its k-th exact distance
is strictly below a lower bound on every non-candidate's distance, derived
from the library's last returned distance minus its rounding error. Other
queries get a radius search from the same library, wide enough to hold every
row within their k-th distance, and are ranked again.

Rounding bounds (Higham, *Accuracy and Stability of Numerical Algorithms*,
2002, section 3.1, doubled for safety): squared Euclidean distances formed as
``|q|^2 + |r|^2 - 2 q.r`` carry an error of at most ``c * u * (|q| + |r|)^2``
and Manhattan sums at most ``c * u * (|q|_1 + |r|_1)``, with ``c = 2(d + 2) + 8``
and ``u`` the unit roundoff (``2**-53`` for scikit-learn's float64,
``2**-24`` for faiss's float32). Rows are centred first, which keeps the
norms, and so the bounds, small.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from curate.neighbours._exact import rank_pairs, rerank_fixed
from curate.neighbours._plan import Plan, Request

__all__ = ["faiss_kneighbors", "faiss_radius", "sklearn_kneighbors", "sklearn_radius"]

RELATIVE = 1e-9
Candidates = tuple[np.ndarray, np.ndarray]  # (distances, reference indices), -1 for none


class _Centred:
    """Centred copies of the reference and query rows, with their norms for the bounds."""

    def __init__(self, req: Request, dtype: type, unit: float) -> None:
        self.req = req
        ref = req.matrix[req.reference]  # the library's own copy of the reference rows
        self.mean = ref.mean(axis=0) if len(ref) else np.zeros(req.dims)
        ref -= self.mean
        self.ref: np.ndarray = np.ascontiguousarray(ref, dtype=dtype)
        self.order = 1 if req.metric == "manhattan" else 2
        self.rmax = float(np.linalg.norm(self.ref.astype(np.float64), ord=self.order,
                                         axis=1).max(initial=0.0))
        self.factor = (2 * (req.dims + 2) + 8) * unit
        # what underflow can lose: the smallest normal number of the library's precision
        self.tiny = (2 * (req.dims + 2) + 8) * float(np.finfo(dtype).tiny)

    def queries(self, rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Centred query rows (library precision) and each one's rounding bound."""
        q = self.req.matrix[self.req.queries[rows]] - self.mean
        norm = np.linalg.norm(q, ord=self.order, axis=1)
        bound = self.factor * (norm + self.rmax) ** self.order + self.tiny
        return np.ascontiguousarray(q, dtype=self.ref.dtype), bound

    def lower(self, last: np.ndarray, bound: np.ndarray) -> np.ndarray:
        """Lower bound on exact distance from the library's last returned distance."""
        if self.order == 1:
            return np.maximum(last - bound, 0.0) * (1 - RELATIVE)
        return np.sqrt(np.maximum(last * last - bound, 0.0)) * (1 - RELATIVE)

    def reach(self, dist: np.ndarray, bound: np.ndarray) -> np.ndarray:
        """Library distance below which every row within exact ``dist`` must fall."""
        if self.order == 1:
            return dist * (1 + RELATIVE) + bound
        return np.sqrt(dist * dist * (1 + RELATIVE) + bound)


def _drop_self(req: Request, rows: np.ndarray, idx: np.ndarray) -> np.ndarray:
    own = req.self_index[rows][:, None]
    return np.where((idx == own) & (own >= 0), -1, idx)


def _certain_knn(req: Request, k: int, plan: Plan, centred: _Centred,
                 search: Callable[[np.ndarray, int], Candidates],
                 radius: Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]]
                 ) -> tuple[np.ndarray, np.ndarray]:
    n_ref = len(req.reference)
    ask = min(n_ref, plan.width + 1)  # one more: the query itself may come back
    out_d = np.empty((len(req.queries), k))
    out_i = np.empty((len(req.queries), k), dtype=np.int64)
    step = max(plan.block, plan.block * plan.tile // max(1, ask))
    for start in range(0, len(req.queries), step):
        rows = np.arange(start, min(len(req.queries), start + step))
        q, bound = centred.queries(rows)
        lib_d, idx = search(q, ask)
        last = lib_d[:, -1].astype(np.float64) if ask < n_ref else np.full(len(rows), np.inf)
        idx = _drop_self(req, rows, idx)
        d, i, ok = rerank_fixed(req.matrix, req.queries[rows], req.reference, idx, k,
                                centred.lower(last, bound), req.metric)
        bad = np.flatnonzero(~ok)
        if len(bad):
            reach = centred.reach(d[bad, k - 1], bound[bad])
            r, j = radius(q[bad], reach)
            sub = req.rows(rows[bad])
            j = _drop_self(sub, np.arange(len(bad))[r], j[:, None])[:, 0]
            keep = j >= 0
            starts, dist, pos = rank_pairs(req.matrix, req.metric, sub.queries, req.reference,
                                           r[keep], j[keep], len(bad))
            take = starts[:-1, None] + np.arange(k)
            d[bad], i[bad] = dist[take], pos[take]
        out_d[rows], out_i[rows] = d, i
    return out_d, out_i


def _certain_radius(req: Request, radius: float, centred: _Centred,
                    search: Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]]
                    ) -> tuple[list[np.ndarray], list[np.ndarray]]:
    n = len(req.queries)
    q, bound = centred.queries(np.arange(n))
    r, j = search(q, centred.reach(np.full(n, float(radius)), bound))
    j = _drop_self(req, r, j[:, None])[:, 0]
    starts, dist, pos = rank_pairs(req.matrix, req.metric, req.queries, req.reference,
                                   r[j >= 0], j[j >= 0], n)
    dists, poss = [], []
    for row in range(n):
        seg = slice(starts[row], starts[row + 1])
        inside = dist[seg] <= radius
        dists.append(dist[seg][inside])
        poss.append(pos[seg][inside])
    return dists, poss


def _sklearn(req: Request) -> tuple[_Centred, object]:
    from sklearn.neighbors import NearestNeighbors

    centred = _Centred(req, np.float64, 2.0**-53)
    model = NearestNeighbors(metric=req.metric).fit(centred.ref)
    return centred, model


def _sk_radius(model: object, memory_mb: int
               ) -> Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]]:
    def search(q: np.ndarray, reach: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        from sklearn import config_context

        # One reach for all: the widest. Extra candidates are dropped by the exact check.
        with config_context(working_memory=memory_mb):
            hits = model.radius_neighbors(q, radius=float(reach.max(initial=0.0)),  # type: ignore[attr-defined]
                                          return_distance=False)
        rows = np.repeat(np.arange(len(q)), [len(h) for h in hits])
        cols = np.concatenate([np.asarray(h, np.int64) for h in hits]) if len(hits) else rows
        return rows, cols.astype(np.int64)
    return search


def sklearn_kneighbors(req: Request, k: int, plan: Plan) -> tuple[np.ndarray, np.ndarray]:
    """Exact k nearest via scikit-learn's NearestNeighbors (trees or brute force, its choice).

    Examples
    --------
    >>> from curate.neighbours._plan import make_request, plan_for
    >>> req = make_request(np.array([[0.0], [1.0], [3.0], [4.0]]), "manhattan", None, None, True)
    >>> sklearn_kneighbors(req, 2, plan_for(64, 4, 4, 1, 2))[1].tolist()
    [[1, 2], [0, 2], [3, 1], [2, 1]]
    """
    centred, model = _sklearn(req)

    def search(q: np.ndarray, ask: int) -> Candidates:
        from sklearn import config_context

        with config_context(working_memory=plan.memory_mb):
            return model.kneighbors(q, n_neighbors=ask)  # type: ignore[attr-defined,no-any-return]

    return _certain_knn(req, k, plan, centred, search, _sk_radius(model, plan.memory_mb))


def sklearn_radius(req: Request, radius: float, plan: Plan) -> tuple[list[np.ndarray],
                                                                     list[np.ndarray]]:
    """Exact radius neighbours via scikit-learn, re-checked with exact distances."""
    centred, model = _sklearn(req)
    return _certain_radius(req, radius, centred, _sk_radius(model, plan.memory_mb))


def _faiss(req: Request) -> tuple[_Centred, object]:
    import faiss

    centred = _Centred(req, np.float32, 2.0**-24)
    kind = faiss.METRIC_L1 if req.metric == "manhattan" else faiss.METRIC_L2
    index = faiss.IndexFlat(req.dims, kind)
    index.add(centred.ref)
    return centred, index


def _faiss_range(index: object, metric: str
                 ) -> Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]]:
    def search(q: np.ndarray, reach: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        widest = float(reach.max(initial=0.0))  # one call; the exact check drops extras
        limit = np.float32(widest if metric == "manhattan" else widest * widest)
        # faiss keeps values strictly below the limit: one float32 step up keeps equality
        limit = np.nextafter(limit, np.float32(np.inf))
        lims, _, labels = index.range_search(q, float(limit))  # type: ignore[attr-defined]
        return np.repeat(np.arange(len(q)), np.diff(lims.astype(np.int64))), labels.astype(np.int64)
    return search


def faiss_kneighbors(req: Request, k: int, plan: Plan) -> tuple[np.ndarray, np.ndarray]:
    """Exact k nearest via a faiss flat index (float32 search, float64 ranking).

    Examples
    --------
    >>> from curate.neighbours._plan import make_request, plan_for
    >>> req = make_request(np.array([[0.0], [1.0], [3.0], [4.0]]), "euclidean", None, None, True)
    >>> faiss_kneighbors(req, 2, plan_for(64, 4, 4, 1, 2))[1].tolist()
    [[1, 2], [0, 2], [3, 1], [2, 1]]
    """
    centred, index = _faiss(req)

    def search(q: np.ndarray, ask: int) -> Candidates:
        from threadpoolctl import threadpool_limits

        # faiss runs its own threads over query blocks; BLAS threads inside them
        # oversubscribe the cores (measured: 4.3 s against 2.5 s at 20,000 rows).
        with threadpool_limits(limits=1, user_api="blas"):
            dist, idx = index.search(q, ask)  # type: ignore[attr-defined]
        dist = dist.astype(np.float64)
        return (np.sqrt(np.maximum(dist, 0)) if req.metric == "euclidean" else dist), idx

    return _certain_knn(req, k, plan, centred, search, _faiss_range(index, req.metric))


def faiss_radius(req: Request, radius: float, plan: Plan) -> tuple[list[np.ndarray],
                                                                   list[np.ndarray]]:
    """Exact radius neighbours via a faiss flat index, re-checked with exact distances."""
    centred, index = _faiss(req)
    return _certain_radius(req, radius, centred, _faiss_range(index, req.metric))
