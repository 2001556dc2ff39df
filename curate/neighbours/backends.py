"""The backend table: every neighbour backend by name, what it can do, and how to call it.

``auto`` picks one by size, dimension and metric and says why
(:func:`choose_backend`); any other name in
:data:`curate.settings.BACKENDS` is looked up in :data:`TABLE`. Each backend
lives in its own private module, imported only when a query first uses it:

* ``brute`` (:mod:`._brute`): direct distances, the slow obvious reference; the
  only one for distances that are not plain Lp distance;
* ``sklearn``, ``faiss`` (:mod:`._libs`): scikit-learn's NearestNeighbors, a flat
  float32 faiss index;
* ``fast`` (:mod:`._fast`, kernels in :mod:`._kernels`): our compiled engine;
* ``approximate`` (:mod:`._approx`): an inverted-file index, opt-in, which
  measures its own recall; its radius queries are answered exactly by ``fast``.

Exact backends only propose candidates; :mod:`._exact` ranks them by float64
distance, so every exact backend returns the same neighbours and bitwise the
same distances.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from curate.errors import UsageError
from curate.neighbours._brute import brute_knn, brute_radius
from curate.neighbours._plan import Plan, Request, plan_for
from curate.settings import BACKENDS

if TYPE_CHECKING:
    from curate.space.points import Space

__all__ = ["LP_METRICS", "TABLE", "Backend", "choose_backend", "plan"]

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

Pairs = tuple[list[np.ndarray], list[np.ndarray]]
# distances, positions, and for the approximate backend what it measured of its recall
Found = tuple[np.ndarray, np.ndarray, Any]


@dataclass(frozen=True)
class Backend:
    """One neighbour backend: ``float32`` names the metrics it proposes candidates for in
    float32 (which needs values in float32's safe range); ``exact`` is False for an
    approximate one."""

    name: str
    float32: tuple[str, ...]
    exact: bool
    knn: Callable[[Space, Request, int], Found]
    radius: Callable[[Space, Request, float], Pairs]


def plan(space: Space, req: Request, k: int) -> Plan:
    """How the query is cut into pieces that fit in the space's memory budget."""
    return plan_for(space.engine.memory_mb, len(req.queries), len(req.reference), req.dims, k)


def _brute(space: Space, req: Request, k: int) -> Found:
    return (*brute_knn(space, req, k), None)


def _fast(space: Space, req: Request, k: int) -> Found:
    from curate.neighbours._fast import fast_kneighbors

    return (*fast_kneighbors(req, k, plan(space, req, k)), None)


def _fast_radius(space: Space, req: Request, radius: float) -> Pairs:
    from curate.neighbours._fast import fast_radius

    return fast_radius(req, radius, plan(space, req, 1))


def _sklearn(space: Space, req: Request, k: int) -> Found:
    from curate.neighbours._libs import sklearn_kneighbors

    return (*sklearn_kneighbors(req, k, plan(space, req, k)), None)


def _sklearn_radius(space: Space, req: Request, radius: float) -> Pairs:
    from curate.neighbours._libs import sklearn_radius

    return sklearn_radius(req, radius, plan(space, req, 1))


def _faiss(space: Space, req: Request, k: int) -> Found:
    from curate.neighbours._libs import faiss_kneighbors

    return (*faiss_kneighbors(req, k, plan(space, req, k)), None)


def _faiss_radius(space: Space, req: Request, radius: float) -> Pairs:
    from curate.neighbours._libs import faiss_radius

    return faiss_radius(req, radius, plan(space, req, 1))


def _approximate(space: Space, req: Request, k: int) -> Found:
    from curate.neighbours._approx import approximate_kneighbors

    return approximate_kneighbors(req, k, plan(space, req, k), space.engine.recall_target)


TABLE: dict[str, Backend] = {b.name: b for b in (
    Backend("brute", (), True, _brute, brute_radius),
    Backend("sklearn", (), True, _sklearn, _sklearn_radius),
    Backend("faiss", LP_METRICS, True, _faiss, _faiss_radius),
    Backend("fast", ("euclidean",), True, _fast, _fast_radius),
    Backend("approximate", LP_METRICS, False, _approximate, _fast_radius),
)}


def choose_backend(space: Space, n_queries: int | None = None,
                   n_reference: int | None = None) -> tuple[str, str]:
    """Return the backend a query will use and the reason, in words.

    Examples
    --------
    >>> from curate.settings import EngineSettings
    >>> from curate.space import Space
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
    if space.metric in TABLE[backend].float32 and not _fits_float32(space.matrix):
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
