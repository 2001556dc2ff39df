"""The k-nearest-neighbour engine every stage uses: one entry point for every backend.

Neighbours of query rows among reference rows of a
:class:`~curate.space.points.Space`, optionally excluding each query row
itself, distances returned, ties in distance broken by the lower position so
that results never depend on the backend or the chunk size. The backend comes
from ``space.engine.backend`` through the table in
:mod:`curate.neighbours.backends`; a space with a cluster address offers its
queries to the executor installed for it (:mod:`curate.neighbours.executor`).
Every k-nearest query is recorded for summary.json
(:func:`curate.neighbours.calls.recording`).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np

from curate.errors import NeighbourCountError, UsageError, counted
from curate.neighbours._plan import Request, make_request
from curate.neighbours.backends import TABLE, choose_backend, plan
from curate.neighbours.calls import EngineCall, note
from curate.neighbours.executor import current_executor
from curate.neighbours.lists import keep_lists, served_lists, wanted_length

if TYPE_CHECKING:
    from curate.space.points import Space

__all__ = ["EngineReport", "check_k", "engine_report", "kneighbors", "radius_neighbors",
           "require_neighbours", "served_here"]


def served_here(space: Space) -> Space:
    """The same space without its cluster address: served by the engine in this process."""
    return replace(space, engine=replace(space.engine, cluster_address=None))


def require_neighbours(k: int, rows: int, *, exclude_self: bool = True, where: str = "") -> None:
    """The one check that ``k`` neighbours can be found among ``rows`` rows.

    The engine runs it on every query, the pipeline on every stage before it
    starts, and each method on the space it was given; ``where`` names the
    stage or method in the message. With ``exclude_self`` a row is not its own
    neighbour, so ``k`` must stay below ``rows``.

    Examples
    --------
    >>> require_neighbours(3, 3)
    Traceback (most recent call last):
    ...
    curate.errors.NeighbourCountError: k = 3: asked for 3 neighbours among 2 rows (3 rows, its own left out)
      hint: set k from 1 to 2, or keep more rows in the stage
    """
    available = max(0, rows - (1 if exclude_self else 0))
    if 1 <= k <= available:
        return
    among = f" ({counted(rows, 'row')}, its own left out)" if exclude_self else ""
    raise NeighbourCountError(f"{where}k = {k}: asked for {counted(k, 'neighbour')} among "
                              f"{counted(available, 'row')}{among}",
                              hint=f"set k from 1 to {available}, or keep more rows in the stage"
                              if available else "keep two or more rows in the stage")


def check_k(k: int, req: Request, exclude_self: bool) -> None:
    """Stop when ``k`` is below 1 or above the reference rows a query can reach."""
    require_neighbours(k, len(req.reference), exclude_self=exclude_self)


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

    Inside :func:`curate.neighbours.lists.sharing_lists` a whole-table
    self-search of that space is answered from, or kept in, the shared lists.
    """
    served = served_lists(space.matrix, k, queries, reference, exclude_self)
    if served is not None:
        return served
    wide = wanted_length(space.matrix, k, queries, reference, exclude_self)
    dist, pos = _kneighbors(space, wide, queries, reference, exclude_self)
    keep_lists(space.matrix, queries, reference, exclude_self, dist, pos)
    return dist[:, :k], pos[:, :k]


def _kneighbors(space: Space, k: int, queries: np.ndarray | None, reference: np.ndarray | None,
                exclude_self: bool) -> tuple[np.ndarray, np.ndarray]:
    req = make_request(space.matrix, space.metric, queries, reference, exclude_self)
    check_k(k, req, exclude_self)
    if len(req.queries) == 0:
        return np.empty((0, k)), np.empty((0, k), dtype=np.int64)
    sizes = (k, len(req.queries), len(req.reference))
    if space.engine.cluster_address is not None:
        # Blocks on the workers are searched exactly: an approximate index per block
        # would be rebuilt by every task, and its recall measured where no one records it.
        if space.engine.backend == "approximate":
            space = replace(space, engine=replace(space.engine, backend="fast"))
        backend, reason = choose_backend(space, len(req.queries), len(req.reference))
        note(EngineCall(backend, f"in blocks on the cluster's workers, each choosing: {reason}",
                        *sizes))
        executor = current_executor(space.engine.cluster_address)
        found = None if executor is None else executor.kneighbors(
            space, k, queries=req.queries, reference=req.reference, exclude_self=exclude_self)
        if found is not None:
            return found
        return kneighbors(served_here(space), k, queries=req.queries, reference=req.reference,
                          exclude_self=exclude_self)
    backend, reason = choose_backend(space, len(req.queries), len(req.reference))
    d, i, measured = TABLE[backend].knn(space, req, k)
    if measured is None:
        note(EngineCall(backend, reason, *sizes))
    else:
        note(EngineCall(backend, reason, *sizes, measured.recall, len(measured.sampled),
                        measured.probes, measured.lists))
    return d, i


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
    if space.engine.cluster_address is not None:
        executor = current_executor(space.engine.cluster_address)
        pairs = None if executor is None else executor.radius_neighbors(
            space, radius, queries=req.queries, reference=req.reference,
            exclude_self=exclude_self)
        if pairs is not None:
            return pairs
        return radius_neighbors(served_here(space), radius, queries=req.queries,
                                reference=req.reference, exclude_self=exclude_self)
    backend, _ = choose_backend(space, len(req.queries), len(req.reference))
    return TABLE[backend].radius(space, req, radius)


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
    >>> from curate.settings import EngineSettings
    >>> from curate.space import Space
    >>> s = Space.from_matrix(np.random.default_rng(0).random((200, 3)),
    ...                       engine=EngineSettings(backend="approximate"))
    >>> r = engine_report(s, 3, sample=50)
    >>> r.backend, r.exact, 0.0 <= r.recall <= 1.0, len(r.sampled)
    ('approximate', False, True, 50)
    """
    req = make_request(space.matrix, space.metric, queries, reference, exclude_self)
    check_k(k, req, exclude_self)
    backend, reason = choose_backend(space, len(req.queries), len(req.reference))
    if backend != "approximate":
        return EngineReport(backend, reason, True, 1.0)
    from curate.neighbours._approx import approximate_kneighbors

    # The index and the probes chosen depend only on the reference rows, the sampled
    # queries and the target, so this is the recall the full query measures for itself
    # (up to float32 rounding in products of another shape).
    _, _, measured = approximate_kneighbors(req, k, plan(space, req, k),
                                            space.engine.recall_target, sample, seed,
                                            sample_only=True)
    return EngineReport(backend, reason, False, measured.recall, measured.sampled)
