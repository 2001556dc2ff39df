"""Shared by the families that let neighbours vote: vote counts, the k-NN rule, vote records.

Private to :mod:`curate.methods`: a family module imports these helpers
instead of importing another family.
"""

from __future__ import annotations

import numpy as np

from curate.methods.base import SelectionBuilder
from curate.neighbours.search import kneighbors
from curate.space.points import Space

__all__ = ["add_vote_records", "describe_votes", "enn_pass", "misclassified", "vote_counts"]


def vote_counts(codes: np.ndarray, neighbour_pos: np.ndarray, n_classes: int) -> np.ndarray:
    """Count neighbour labels per row: an ``(n, n_classes)`` integer matrix."""
    counts = np.zeros((neighbour_pos.shape[0], n_classes), dtype=np.int64)
    rows = np.arange(neighbour_pos.shape[0])
    for j in range(neighbour_pos.shape[1]):
        np.add.at(counts, (rows, codes[neighbour_pos[:, j]]), 1)
    return counts


def describe_votes(counts: np.ndarray, names: np.ndarray, own: int) -> str:
    """Say in words how neighbours voted, most votes first.

    Examples
    --------
    >>> describe_votes(np.array([2, 1]), np.array(["ok", "worn"]), 1)
    "2 of its 3 nearest neighbours are labelled 'ok', 1 'worn' (its own label)"
    >>> describe_votes(np.array([1, 0]), np.array(["ok", "worn"]), 1)
    "its nearest neighbour is labelled 'ok', none 'worn' (its own label)"
    """
    k = int(counts.sum())
    order = sorted(np.flatnonzero(counts), key=lambda c: (-counts[c], c))
    parts = []
    for i, c in enumerate(order):
        mark = " (its own label)" if c == own else ""
        if i > 0:
            lead = f"{counts[c]} "
        elif k == 1:
            lead = "its nearest neighbour is labelled "
        else:
            lead = f"{counts[c]} of its {k} nearest neighbours are labelled "
        parts.append(f"{lead}{str(names[c])!r}{mark}")
    if own not in order:
        parts.append(f"none {str(names[own])!r} (its own label)")
    return ", ".join(parts)


def misclassified(counts: np.ndarray, own: np.ndarray, vote: str) -> np.ndarray:
    """Rows that the neighbours' vote gets wrong.

    ``majority``: the k-NN rule misclassifies the row, i.e. some other label
    has strictly more votes than its own (Wilson 1972). When its own label ties
    for the most votes the vote is not against it, and the row stays.
    ``unanimous``: the row goes unless every neighbour shares its label.

    Examples
    --------
    >>> c = np.array([[2, 1, 0], [1, 1, 1], [0, 3, 0]])
    >>> misclassified(c, np.array([1, 2, 1]), "majority").tolist()
    [True, False, False]
    >>> misclassified(c, np.array([1, 2, 1]), "unanimous").tolist()
    [True, True, False]
    """
    mine = counts[np.arange(len(own)), own]
    if vote == "unanimous":
        return mine < counts.sum(axis=1)
    return counts.max(axis=1) > mine


def enn_pass(space: Space, codes: np.ndarray, k: int, vote: str,
             active: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """One ENN pass among ``active`` positions: (misclassified mask, neighbour dists, positions).

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [2.0], [9.0]])
    >>> wrong, dist, nbr = enn_pass(s, np.array([0, 0, 1, 1]), 1, "majority")
    >>> wrong.tolist(), nbr[:, 0].tolist()
    ([False, False, True, False], [1, 0, 1, 2])
    """
    pos = np.arange(space.n) if active is None else active
    dist, nbr = kneighbors(space, k, queries=pos, reference=pos)
    counts = vote_counts(codes, nbr, int(codes.max(initial=0)) + 1)
    return misclassified(counts, codes[pos], vote), dist, nbr


def add_vote_records(out: SelectionBuilder, positions: np.ndarray, rows: np.ndarray, codes: np.ndarray,
                     names: np.ndarray, nbr: np.ndarray, dist: np.ndarray, *,
                     step: int = 1, suffix: str = "") -> None:
    """Record ``positions`` as outvoted; ``rows`` index their lines in ``nbr``/``dist``.

    Examples
    --------
    >>> out = SelectionBuilder(3)
    >>> add_vote_records(out, np.array([2]), np.array([0]), np.array([0, 0, 1]),
    ...                  np.array(["ok", "worn"]), np.array([[1, 0]]), np.array([[1.0, 2.0]]))
    >>> out.selection().detail
    ["2 of its 2 nearest neighbours are labelled 'ok', none 'worn' (its own label)"]
    """
    for pos, row in zip(positions, rows, strict=True):
        counts = np.bincount(codes[nbr[row]], minlength=len(names))
        out.add(int(pos), "knn-disagrees",
                describe_votes(counts, names, int(codes[pos])) + suffix,
                neighbours=nbr[row], distances=dist[row], step=step)
