"""Scores: the k-disagreeing-neighbours hardness of each row (Smith, Martinez and
Giraud-Carrier 2014), which a stage may also use as a filter."""

from __future__ import annotations

import numpy as np

from curate.errors import counted
from curate.methods._votes import tie_notes
from curate.methods.base import MethodInfo, Selection, SelectionBuilder, encode
from curate.neighbours.search import kneighbors, require_neighbours
from curate.settings import Param
from curate.space.points import Space

__all__ = ["HARDNESS", "hardness", "kdn_scores"]


def kdn_scores(space: Space, codes: np.ndarray, k: int
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """k-disagreeing neighbours: the share of each row's k nearest neighbours with another label.

    Returns (scores, neighbour distances, neighbour positions).

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [0.1], [0.2], [5.0]])
    >>> kdn_scores(s, np.array([0, 0, 1, 1]), 2)[0].tolist()
    [0.5, 0.5, 1.0, 0.5]
    """
    dist, nbr = kneighbors(space, k)
    disagree = (codes[nbr] != codes[:, None]).sum(axis=1)
    return disagree / k, dist, nbr


def hardness(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
             k: int = 5, threshold: float | None = None) -> Selection:
    """Score every row by kDN (Smith, Martinez and Giraud-Carrier 2014); optionally remove hard rows.

    The scores go to ``Selection.scores["hardness"]``. Nothing leaves unless
    ``threshold`` is given; then rows with kDN >= threshold leave.

    When not to use it as a filter: on classes that overlap by nature (hard
    rows there are real, and removing them flatters accuracy), or on a
    minority class whose rows are mostly surrounded by the majority.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [0.1], [0.2], [5.0]])
    >>> sel = hardness(s, np.array(["a", "a", "b", "b"]), removable=np.ones(4, bool), k=2,
    ...                threshold=1.0)
    >>> sel.removed.tolist(), sel.scores["hardness"].tolist()
    ([2], [0.5, 0.5, 1.0, 0.5])
    """
    require_neighbours(k, space.n, where="hardness: ")
    _, codes = encode(labels)
    scores, dist, nbr = kdn_scores(space, codes, k)
    out = SelectionBuilder(space.n)
    if threshold is not None:
        hard = np.flatnonzero((scores >= threshold) & removable)
        for i, note in zip(hard, tie_notes(space, hard, dist[hard]), strict=True):
            other = int(round(scores[i] * k))
            out.add(int(i), "hard",
                    f"{other} of its {counted(k, 'nearest neighbour')} "
                    f"{'has' if other == 1 else 'have'} another label "
                    f"(kDN {scores[i]:.3g} >= threshold {threshold:g}){note}",
                    neighbours=nbr[i], distances=dist[i])
    sel = out.selection(info={"k": k, "threshold": threshold,
                              "mean_hardness": float(scores.mean()) if space.n else 0.0})
    sel.scores["hardness"] = scores
    return sel


HARDNESS = MethodInfo(
    key="hardness", name="instance hardness, k-disagreeing neighbours (kDN)", family="scores",
    reference="Smith, Martinez and Giraud-Carrier 2014",
    purpose="score each row by the share of its k nearest neighbours with another label; "
            "optionally remove rows at or above a threshold",
    judged_by_lists=True,
    func=hardness, catches=("label-flip",),
    params=(
        Param("k", int, 5, "neighbours that are compared with the row's label", low=1),
        Param("threshold", float, None, "remove rows whose kDN is at least this (none: score "
              "only)", check=lambda v: 0 < v <= 1, check_says="greater than 0, at most 1"),
    ),
    reasons={"hard": "kDN (share of the k nearest neighbours with another label) at or above "
                     "the threshold"},
)
