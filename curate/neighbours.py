"""The k-nearest-neighbour engine every stage uses.

One interface: neighbours of query rows among reference rows of a
:class:`~curate.space.Space`, optionally excluding each query row itself,
distances returned, ties in distance broken by the lower position so that
results never depend on the backend or the chunk size.

Backends (``space.engine.backend``): ``brute`` (direct distances, the slow
obvious reference), ``sklearn`` (scikit-learn's NearestNeighbors), ``faiss``
(a flat float32 index), ``fast`` (our compiled engine), ``approximate``
(an inverted-file index, opt-in; every query measures its own recall on a
sample and :func:`recording` collects it) and ``auto``, which picks one by
size, dimension and metric and says why
(:func:`choose_backend`). All exact backends return identical neighbours and
bitwise identical distances: candidates found in lower precision are always
ranked by exact float64 distance. A metric other than Euclidean or Manhattan
(a space whose distance is not plain Lp) always goes through chunked
:meth:`Space.distances`.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import asdict, dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np
from scipy.spatial.distance import cdist

from curate.engine_plan import Plan, Request, make_request, plan_for
from curate.errors import UsageError
from curate.neighbour_lists import keep_lists, served_lists

if TYPE_CHECKING:
    from curate.space import Space

__all__ = ["BACKENDS", "EngineCall", "EngineReport", "NeighbourCountError", "choose_backend",
           "engine_report", "kneighbors", "pairwise", "radius_neighbors", "recording",
           "summarise_calls"]

BACKENDS = ("auto", "brute", "sklearn", "faiss", "fast", "approximate")
LP_METRICS = ("euclidean", "manhattan")
# Measured on 2 cores (queries x reference rows, 10 columns, k = 4): direct blocks take
# 0.1 ms for 1 x 1,000 and 5 ms for 500 x 500, where the compiled engine needs 2.6 and
# 4 ms; at 1,000 x 1,000 it is 17 ms against 6. scikit-learn's trees beat the compiled
# engine up to 6 columns (50,000 rows: 1.5 s against 2.3 s at 6 columns, 3.7 s against
# 1.2 s at 8).
# A handful of queries among many rows: the other engines first convert or index every
# reference row (1 x 50,000 rows: 2 ms direct, 15 ms compiled, 96 ms trees).
SMALL_PAIRS = 250_000  # up to this many pairs one direct block is quickest
FEW_QUERIES = 8
TREE_DIMS = 6  # up to this many columns, scikit-learn's trees prune well
FLOAT32_SAFE = 1e15  # squares up to 1e30 times a few columns: far below float32's 3.4e38

_SCIPY_METRIC = {"euclidean": "euclidean", "manhattan": "cityblock"}
Pairs = tuple[list[np.ndarray], list[np.ndarray]]


class NeighbourCountError(UsageError, ValueError):
    """More neighbours were asked for than there are reference rows."""


def choose_backend(space: Space, n_queries: int | None = None,
                   n_reference: int | None = None) -> tuple[str, str]:
    """Return the backend a query will use and the reason, in words.

    Examples
    --------
    >>> from curate.space import EngineSettings, Space
    >>> s = Space.from_matrix(np.zeros((10, 3)))
    >>> choose_backend(s)[0]
    'brute'
    >>> s = Space.from_matrix(np.zeros((10, 3)), engine=EngineSettings(backend="fast"))
    >>> choose_backend(s)
    ('fast', "asked for: backend = 'fast'")
    """
    asked = space.engine.backend
    if asked not in BACKENDS:
        raise UsageError(f"unknown neighbour backend {asked!r}",
                         hint="use one of " + ", ".join(repr(b) for b in BACKENDS))
    nq = space.n if n_queries is None else n_queries
    nr = space.n if n_reference is None else n_reference
    backend, reason = _pick(asked, space.metric, nq, nr, space.matrix.shape[1])
    float32 = backend in ("faiss", "approximate") or (backend, space.metric) == ("fast",
                                                                             "euclidean")
    if float32 and not _fits_float32(space.matrix):
        return "sklearn", "values beyond float32's safe range (1e15): scikit-learn in float64"
    return backend, reason


def _pick(asked: str, metric: str, nq: int, nr: int, dims: int) -> tuple[str, str]:
    if metric not in LP_METRICS:
        return "brute", f"distance {metric!r} is not plain Lp distance: direct distances in chunks"
    if dims == 0:
        return "brute", "no feature columns: every distance is 0"
    if asked == "approximate" and metric == "manhattan":
        return "fast", "the approximate index has no Manhattan distance: exact fast engine"
    if asked != "auto":
        return asked, f"asked for: backend = {asked!r}"
    if nq * nr <= SMALL_PAIRS or nq <= FEW_QUERIES:
        return "brute", f"small: {nq} queries x {nr} rows, direct distances are quickest"
    if dims <= TREE_DIMS:
        return "sklearn", f"{dims} columns: scikit-learn's trees prune most pairs"
    return "fast", f"{nq} x {nr} pairs in {dims} columns: compiled exact engine"


def _fits_float32(matrix: np.ndarray) -> bool:
    """Whether squared distances of these values stay far inside float32's range."""
    if matrix.size == 0:
        return True
    return bool(max(abs(float(matrix.max())), abs(float(matrix.min()))) <= FLOAT32_SAFE)


def _check_k(k: int, req: Request, exclude_self: bool) -> None:
    available = max(0, len(req.reference) - (1 if exclude_self else 0))
    if k < 1 or k > available:
        raise NeighbourCountError(f"asked for {k} neighbours among {available} rows",
                                  hint="lower k or keep more rows in the stage")


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


def _brute_knn(space: Space, req: Request, k: int) -> tuple[np.ndarray, np.ndarray]:
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


def _brute_radius(space: Space, req: Request, radius: float) -> Pairs:
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


def _plan(space: Space, req: Request, k: int) -> Plan:
    return plan_for(space.engine.memory_mb, len(req.queries), len(req.reference), req.dims, k)


@dataclass(frozen=True)
class EngineCall:
    """One k-nearest query as the engine ran it: backend, why, sizes and, when approximate,
    the recall measured on its own seeded sample of queries."""

    backend: str
    reason: str
    k: int
    queries: int
    reference: int
    recall: float = 1.0
    sample: int = 0
    probes: int = 0
    lists: int = 0


_CALLS: ContextVar[list[EngineCall] | None] = ContextVar("curate_engine_calls", default=None)


@contextmanager
def recording() -> Iterator[list[EngineCall]]:
    """Collect an :class:`EngineCall` for every k-nearest query made inside the block.

    Examples
    --------
    >>> from curate.space import Space
    >>> with recording() as calls:
    ...     _ = kneighbors(Space.from_matrix([[0.0], [1.0], [3.0]]), 1)
    >>> [(c.backend, c.k, c.queries) for c in calls]
    [('brute', 1, 3)]
    """
    calls: list[EngineCall] = []
    token = _CALLS.set(calls)
    try:
        yield calls
    finally:
        _CALLS.reset(token)


def _note(call: EngineCall) -> None:
    calls = _CALLS.get()
    if calls is not None:
        calls.append(call)


def summarise_calls(calls: list[EngineCall]) -> dict[str, object]:
    """What a stage's neighbour queries used, for summary.json: backends, and for the
    approximate ones their lowest measured recall and the queries it was measured on.

    Examples
    --------
    >>> summarise_calls([EngineCall("fast", "why", 3, 10, 10)])
    {'backends': ['fast'], 'queries': 1, 'exact': True}
    """
    out: dict[str, object] = {"backends": sorted({c.backend for c in calls}),
                              "queries": len(calls)}
    approx = [c for c in calls if c.backend == "approximate"]
    out["exact"] = not approx
    if approx:
        worst = min(approx, key=lambda c: c.recall)
        out.update({"recall": worst.recall, "recall_sample": sum(c.sample for c in approx),
                    "approximate_queries": len(approx),
                    "lowest": {key: value for key, value in asdict(worst).items()
                               if key not in ("backend", "reason")}})
    return out


def _run_knn(backend: str, space: Space, req: Request, k: int) -> tuple[np.ndarray, np.ndarray]:
    if backend == "brute":
        return _brute_knn(space, req, k)
    if backend == "fast":
        from curate.engine_fast import fast_kneighbors

        return fast_kneighbors(req, k, _plan(space, req, k))
    from curate import engine_libs

    search = engine_libs.faiss_kneighbors if backend == "faiss" else \
        engine_libs.sklearn_kneighbors
    return search(req, k, _plan(space, req, k))


def kneighbors(space: Space, k: int, *, queries: np.ndarray | None = None,
               reference: np.ndarray | None = None,
               exclude_self: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """Return distances and positions of the ``k`` nearest reference rows of each query.

    Parameters
    ----------
    space : Space
        The rows and their distance; ``space.engine`` picks the backend and
        the memory that the query may use beyond the data and the results.
    k : int
        Neighbours per query; fewer reference rows than ``k`` is an error.
    queries, reference : array of positions, optional
        Positions in ``space``; all rows when omitted. Reference positions
        must be distinct.
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

    Inside :func:`curate.neighbour_lists.sharing_lists` a whole-table
    self-search of that space is answered from, or kept in, the shared lists.
    """
    served = served_lists(space.matrix, k, queries, reference, exclude_self)
    if served is not None:
        return served
    dist, pos = _kneighbors(space, k, queries, reference, exclude_self)
    keep_lists(space.matrix, queries, reference, exclude_self, dist, pos)
    return dist, pos


def _kneighbors(space: Space, k: int, queries: np.ndarray | None, reference: np.ndarray | None,
                exclude_self: bool) -> tuple[np.ndarray, np.ndarray]:
    req = make_request(space.matrix, space.metric, queries, reference, exclude_self)
    _check_k(k, req, exclude_self)
    if len(req.queries) == 0:
        return np.empty((0, k)), np.empty((0, k), dtype=np.int64)
    sizes = (k, len(req.queries), len(req.reference))
    if space.engine.cluster is not None:
        from curate.distributed import kneighbors_on_cluster

        # Blocks on the workers are searched exactly: an approximate index per block
        # would be rebuilt by every task, and its recall measured where no one records it.
        if space.engine.backend == "approximate":
            space = replace(space, engine=replace(space.engine, backend="fast"))
        backend, reason = choose_backend(space, len(req.queries), len(req.reference))
        _note(EngineCall(backend, f"in blocks on the cluster's workers, each choosing: {reason}",
                         *sizes))
        return kneighbors_on_cluster(space, k, queries=req.queries, reference=req.reference,
                                     exclude_self=exclude_self)
    backend, reason = choose_backend(space, len(req.queries), len(req.reference))
    if backend == "approximate":
        from curate.engine_approx import approximate_kneighbors

        d, i, measured = approximate_kneighbors(req, k, _plan(space, req, k),
                                                space.engine.recall_target)
        _note(EngineCall(backend, reason, *sizes, measured.recall, len(measured.sampled),
                         measured.probes, measured.lists))
        return d, i
    _note(EngineCall(backend, reason, *sizes))
    return _run_knn(backend, space, req, k)


def radius_neighbors(space: Space, radius: float, *, queries: np.ndarray | None = None,
                     reference: np.ndarray | None = None,
                     exclude_self: bool = True) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """Return, per query, distances and positions of reference rows within ``radius``.

    Rows at exactly ``radius`` count as inside. Each list is ordered by
    distance, then position. The approximate backend answers radius queries
    exactly, with the fast engine.

    Examples
    --------
    >>> from curate.space import Space
    >>> s = Space.from_matrix([[0.0], [1.0], [3.0]])
    >>> d, i = radius_neighbors(s, 1.0)
    >>> [x.tolist() for x in i]
    [[1], [0], []]
    """
    if not radius >= 0:  # also catches NaN
        if np.isnan(radius):
            raise UsageError("the neighbour radius is NaN", hint="give a number >= 0")
        radius = -1.0  # nothing is within a negative radius
    req = make_request(space.matrix, space.metric, queries, reference, exclude_self)
    if len(req.queries) == 0 or len(req.reference) == 0 or radius < 0:
        return ([np.empty(0) for _ in req.queries],
                [np.empty(0, dtype=np.int64) for _ in req.queries])
    if space.engine.cluster is not None:
        from curate.distributed import radius_on_cluster

        return radius_on_cluster(space, radius, queries=req.queries, reference=req.reference,
                                 exclude_self=exclude_self)
    backend, _ = choose_backend(space, len(req.queries), len(req.reference))
    if backend == "brute":
        return _brute_radius(space, req, radius)
    plan = _plan(space, req, 1)
    if backend in ("fast", "approximate"):
        from curate.engine_fast import fast_radius

        return fast_radius(req, radius, plan)
    from curate import engine_libs

    search: Callable[..., Pairs] = engine_libs.faiss_radius if backend == "faiss" else \
        engine_libs.sklearn_radius
    return search(req, radius, plan)


def pairwise(matrix_a: np.ndarray, matrix_b: np.ndarray, metric: str) -> np.ndarray:
    """Exact distances between two blocks of rows, by direct differences.

    Examples
    --------
    >>> pairwise(np.array([[0.0, 0.0]]), np.array([[3.0, 4.0]]), "manhattan").tolist()
    [[7.0]]
    """
    return cdist(matrix_a, matrix_b, metric=_SCIPY_METRIC[metric])


@dataclass(frozen=True)
class EngineReport:
    """What the engine did for one stage: backend, why, and how exact (for summary.json)."""

    backend: str
    reason: str
    exact: bool
    recall: float
    sampled: np.ndarray = field(default_factory=lambda: np.empty(0, dtype=np.int64))

    def as_dict(self) -> dict[str, object]:
        """Plain values for JSON: backend, reason, exact, recall, recall_sample."""
        return {"backend": self.backend, "reason": self.reason, "exact": self.exact,
                "recall": self.recall, "recall_sample": int(len(self.sampled))}


def engine_report(space: Space, k: int, *, queries: np.ndarray | None = None,
                  reference: np.ndarray | None = None, exclude_self: bool = True,
                  seed: int = 0, sample: int = 1000) -> EngineReport:
    """Say which backend a k-nearest query uses and, if approximate, measure its recall.

    Recall is the share of each sampled query's exact ``k`` nearest (fast
    exact engine) that the approximate index returns, averaged over up to
    ``sample`` queries drawn with ``seed``; ``sampled`` holds their positions.
    Exact backends report recall 1.0 without measuring.

    Examples
    --------
    >>> from curate.space import EngineSettings, Space
    >>> s = Space.from_matrix(np.random.default_rng(0).random((200, 3)),
    ...                       engine=EngineSettings(backend="approximate"))
    >>> r = engine_report(s, 3, sample=50)
    >>> r.backend, r.exact, 0.0 <= r.recall <= 1.0, len(r.sampled)
    ('approximate', False, True, 50)
    """
    req = make_request(space.matrix, space.metric, queries, reference, exclude_self)
    _check_k(k, req, exclude_self)
    backend, reason = choose_backend(space, len(req.queries), len(req.reference))
    if backend != "approximate":
        return EngineReport(backend, reason, True, 1.0)
    from curate.engine_approx import approximate_kneighbors

    # The index and the probes chosen depend only on the reference rows, the sampled
    # queries and the target, so this is the recall the full query measures for itself
    # (up to float32 rounding in products of another shape).
    _, _, measured = approximate_kneighbors(req, k, _plan(space, req, k),
                                            space.engine.recall_target, sample, seed,
                                            sample_only=True)
    return EngineReport(backend, reason, False, measured.recall, measured.sampled)
