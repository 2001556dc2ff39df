"""Whole-table neighbour lists that a stage hands to the engine, or keeps from it.

A run keeps each editing stage's lists (every row's k nearest rows of the
stage, with distances) so that a later update can bring them up to date
instead of searching again; the update then hands the lists back and runs
the stage's method unchanged on them, which is what makes its result the
same as a full run's. Both go through :func:`sharing_lists`, a context in
which :func:`curate.neighbours.search.kneighbors` answers a whole-table self-search
of that one space (every row a query among all rows, itself left out) from
the lists when they are long enough, and keeps what it computed otherwise.

Why a context variable: the lists belong to one stage call, and the methods
stay pure functions of (space, labels, parameters) that never see them. The
variable is reset when the block ends, so nothing leaks into the next stage.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass

import numpy as np

__all__ = ["SharedLists", "keep_lists", "served_lists", "sharing_lists", "wanted_length"]


@dataclass
class SharedLists:
    """The lists of the space whose matrix is ``matrix``: ``dist`` and ``nbr`` are
    ``(n, k)`` arrays (nearest first, ties by position) or None until kept."""

    matrix: np.ndarray
    dist: np.ndarray | None = None
    nbr: np.ndarray | None = None
    widen: int = 0

    def pair(self) -> tuple[np.ndarray, np.ndarray] | None:
        """``(dist, nbr)`` when lists are held, else None."""
        return None if self.dist is None or self.nbr is None else (self.dist, self.nbr)

    @property
    def length(self) -> int:
        """Neighbours listed per row (0 when nothing is listed yet)."""
        return 0 if self.nbr is None else int(self.nbr.shape[1])


_SHARED: ContextVar[SharedLists | None] = ContextVar("curate_shared_lists", default=None)


@contextmanager
def sharing_lists(matrix: np.ndarray, dist: np.ndarray | None = None,
                  nbr: np.ndarray | None = None, widen: int = 0) -> Iterator[SharedLists]:
    """Serve (or keep) whole-table neighbour lists of the space whose matrix is ``matrix``.

    Lists also answer a query of some rows among all rows (itself left out), for as many
    neighbours as they hold. With ``widen``, a whole-table search that is kept lists that
    many more neighbours than asked: a vote of k also words whether its k-th neighbour was
    tied with the next one, which then needs no search of its own.

    Examples
    --------
    >>> from curate.neighbours.search import kneighbors
    >>> from curate.space.points import Space
    >>> s = Space.from_matrix([[0.0], [1.0], [3.0]])
    >>> with sharing_lists(s.matrix) as kept:
    ...     _ = kneighbors(s, 1)
    >>> kept.nbr.tolist()
    [[1], [0], [1]]
    >>> with sharing_lists(s.matrix, np.zeros((3, 1)), np.array([[2], [2], [0]])):
    ...     kneighbors(s, 1)[1].tolist()
    [[2], [2], [0]]
    """
    shared = SharedLists(matrix, dist, nbr, widen)
    token = _SHARED.set(shared)
    try:
        yield shared
    finally:
        _SHARED.reset(token)


def _whole(shared: SharedLists | None, matrix: np.ndarray, queries: np.ndarray | None,
           reference: np.ndarray | None, exclude_self: bool) -> bool:
    """Whether a query is the whole-table self-search of the shared space."""
    if shared is None or matrix is not shared.matrix or not exclude_self:
        return False
    n = matrix.shape[0]
    return all(p is None or (len(p) == n and np.array_equal(p, np.arange(n)))
               for p in (queries, reference))


def served_lists(matrix: np.ndarray, k: int, queries: np.ndarray | None,
                 reference: np.ndarray | None,
                 exclude_self: bool) -> tuple[np.ndarray, np.ndarray] | None:
    """The first ``k`` columns of the shared lists when they answer this query, else None."""
    shared = _SHARED.get()
    if shared is None or shared.dist is None or shared.nbr is None or shared.length < k:
        return None
    n = matrix.shape[0]
    if not _whole(shared, matrix, None, reference, exclude_self):
        return None
    if queries is None:
        return shared.dist[:, :k].copy(), shared.nbr[:, :k].copy()
    rows = np.asarray(queries, dtype=np.int64).reshape(-1)
    if len(rows) == 0 or rows.min() < 0 or rows.max() >= n:
        return None  # the engine says what is wrong with such positions
    return shared.dist[rows, :k], shared.nbr[rows, :k]


def wanted_length(matrix: np.ndarray, k: int, queries: np.ndarray | None,
                  reference: np.ndarray | None, exclude_self: bool) -> int:
    """How many neighbours to search for: ``k``, or more for a whole-table search that the
    shared lists keep with ``widen`` (never more than the other rows)."""
    shared = _SHARED.get()
    if shared is None or not shared.widen or not _whole(shared, matrix, queries, reference,
                                                        exclude_self):
        return k
    return max(k, min(k + shared.widen, matrix.shape[0] - 1))


def keep_lists(matrix: np.ndarray, queries: np.ndarray | None, reference: np.ndarray | None,
               exclude_self: bool, dist: np.ndarray, nbr: np.ndarray) -> None:
    """Keep a whole-table answer in the shared lists when it is longer than what they hold."""
    shared = _SHARED.get()
    if shared is not None and nbr.shape[1] > shared.length and \
            _whole(shared, matrix, queries, reference, exclude_self):
        shared.dist, shared.nbr = dist, nbr
