"""Editing: remove rows whose label disagrees with their neighbourhood (likely mislabels)."""

from __future__ import annotations

import numpy as np

from curate.methods.base import (
    MethodInfo,
    Param,
    Removals,
    Selection,
    describe_votes,
    encode,
    require_rows,
    vote_counts,
)
from curate.neighbours import kneighbors
from curate.space import Space

__all__ = ["ENN", "enn", "misclassified"]


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
    """One ENN pass among ``active`` positions: (misclassified mask, neighbour dists, positions)."""
    pos = np.arange(space.n) if active is None else active
    dist, nbr = kneighbors(space, k, queries=pos, reference=pos)
    counts = vote_counts(codes, nbr, int(codes.max(initial=0)) + 1)
    return misclassified(counts, codes[pos], vote), dist, nbr


def enn(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
        k: int = 3, vote: str = "majority") -> Selection:
    """Wilson's edited nearest neighbours: remove rows their k nearest neighbours misclassify.

    Each row's k nearest neighbours among all rows (itself excluded, ties in
    distance broken by position) vote; see :func:`misclassified` for the rule.
    All rows are judged against the same, unedited set.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [0.1], [0.2], [0.3], [5.0], [5.1], [5.2]])
    >>> y = np.array(["a", "a", "b", "a", "b", "b", "b"])
    >>> enn(s, y, removable=np.ones(7, bool)).removed.tolist()
    [2]
    """
    require_rows(space.n, k, "enn")
    names, codes = encode(labels)
    wrong, dist, nbr = enn_pass(space, codes, k, vote)
    out = Removals(space.n)
    n_classes = len(names)
    for i in np.flatnonzero(wrong & removable):
        counts = np.bincount(codes[nbr[i]], minlength=n_classes)
        out.add(int(i), "knn-disagrees", describe_votes(counts, names, int(codes[i])),
                neighbours=nbr[i], distances=dist[i])
    return out.selection()


ENN = MethodInfo(
    key="enn", name="Edited Nearest Neighbours (ENN)", family="editing",
    reference="Wilson 1972",
    purpose="remove likely mislabels: rows their k nearest neighbours vote against",
    func=enn,
    params=(
        Param("k", int, 3, "neighbours that vote", low=1),
        Param("vote", str, "majority", "majority: removed when the k-NN vote misclassifies "
              "the row; unanimous: removed unless all k neighbours agree",
              choices=("majority", "unanimous")),
    ),
    reasons={"knn-disagrees": "the k nearest neighbours vote for another label"},
)
