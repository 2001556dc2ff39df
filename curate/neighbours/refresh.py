"""Bring a stage's neighbour lists up to date when rows enter and leave it.

A row's list (its k nearest rows of the stage, nearest first, ties in
distance broken by input position) changes only when

* a row entering the stage is nearer than the k-th neighbour, or as near at a
  lower position: it is merged into the list, which needs only the distance
  to the entering rows (found with :func:`curate.neighbours.within.entering_neighbours`,
  one radius per row, the k-th distance);
* a listed neighbour leaves the stage: the row is searched again in full.

Entering rows are searched in full. Everything else keeps its list, and the
result is exactly the list a full search of the new rows would give: the
distances are the engine's own and the old ones were computed in the same
space (the update checks its fingerprint).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from curate.neighbours.search import kneighbors
from curate.neighbours.within import entering_neighbours
from curate.space.points import Space

__all__ = ["ListChanges", "refresh_lists"]


@dataclass(frozen=True)
class ListChanges:
    """Which rows' lists changed, in stage positions: searched afresh (entering rows and rows
    that lost a neighbour) or merged with entering rows."""

    entering: np.ndarray
    lost: np.ndarray
    merged: np.ndarray

    @property
    def changed(self) -> np.ndarray:
        """Every stage position whose list is new or changed."""
        return np.unique(np.concatenate([self.entering, self.lost, self.merged]))


def refresh_lists(space: Space, rows: np.ndarray, old_rows: np.ndarray, old_dist: np.ndarray,
                  old_nbr: np.ndarray) -> tuple[np.ndarray, np.ndarray, ListChanges]:
    """The lists of the stage whose rows (input positions, ascending) are ``rows``.

    ``space`` holds those rows in that order; ``old_dist`` and ``old_nbr`` are
    the lists of the earlier stage rows ``old_rows`` (neighbours as input
    positions). Returns distances, neighbours as positions in ``space``, and
    what changed.

    Examples
    --------
    Row 10 enters between rows 1 and 2: it becomes the nearest neighbour of
    both, and gets its own list.

    >>> s = Space.from_matrix([[0.0], [1.0], [2.0], [1.6]])
    >>> d, n, ch = refresh_lists(s, np.array([0, 1, 2, 10]), np.array([0, 1, 2]),
    ...                          np.array([[1.0], [1.0], [1.0]]), np.array([[1], [0], [1]]))
    >>> n.tolist(), ch.merged.tolist(), ch.entering.tolist()
    ([[1], [3], [3], [2]], [1, 2], [3])
    """
    k = old_nbr.shape[1]
    # stage position by input position, -1 for rows not in the stage now (a gather, where a
    # binary search of every listed neighbour took most of a second on a million rows)
    where = np.full(int(max(rows.max(initial=-1), old_rows.max(initial=-1))) + 1, -1,
                    dtype=np.int64)
    where[rows] = np.arange(len(rows))
    staying = where[old_rows] >= 0
    here = where[old_rows[staying]]  # stage positions of the staying rows
    listed = where[old_nbr[staying]]
    gone = listed < 0
    dist = np.empty((len(rows), k))
    nbr = np.full((len(rows), k), -1, dtype=np.int64)
    dist[here] = old_dist[staying]
    nbr[here] = np.where(gone, 0, listed)
    searched = np.ones(len(rows), dtype=bool)
    searched[here] = False
    entering = np.flatnonzero(searched)
    lost = here[gone.any(axis=1)]
    if len(lost):
        dist[lost], nbr[lost] = kneighbors(space, k, queries=lost)
    stable = here[~gone.any(axis=1)]
    radii = np.full(len(rows), -1.0)
    radii[stable] = dist[stable, k - 1]
    merged = np.zeros(0, dtype=np.int64)
    if len(entering):
        dist[entering], nbr[entering], near, p, d = entering_neighbours(space, k, entering, radii)
        merged = _merge_entering(dist, nbr, near, p, d)
    return dist, nbr, ListChanges(entering, lost, merged)


def _merge_entering(dist: np.ndarray, nbr: np.ndarray, rows: np.ndarray, p: np.ndarray,
                    d: np.ndarray) -> np.ndarray:
    """Merge entering rows ``p`` (at distance ``d`` of ``rows``) into the lists of the rows
    they beat; return those rows."""
    k = nbr.shape[1]
    beats = (d < dist[rows, k - 1]) | ((d == dist[rows, k - 1]) & (p < nbr[rows, k - 1]))
    rows, p, d = rows[beats], p[beats], d[beats]
    touched = np.unique(rows)
    if len(touched) == 0:
        return touched
    owner = np.concatenate([np.repeat(touched, k), rows])
    cand_p = np.concatenate([nbr[touched].ravel(), p])
    cand_d = np.concatenate([dist[touched].ravel(), d])
    order = np.lexsort((cand_p, cand_d, owner))
    owner, cand_p, cand_d = owner[order], cand_p[order], cand_d[order]
    first = np.searchsorted(owner, touched)
    take = first[:, None] + np.arange(k)
    dist[touched], nbr[touched] = cand_d[take], cand_p[take]
    return touched
