"""Editing: remove rows whose label disagrees with their neighbourhood (likely mislabels).

ENN (Wilson 1972) judges every row once against the whole set; RENN and
All-kNN (Tomek 1976) are its repeated and multi-k relatives. Tomek links and
the neighbourhood cleaning rule live in :mod:`curate.methods.cleaning`.
"""

from __future__ import annotations

import numpy as np

from curate.methods._votes import add_vote_records, enn_pass, misclassified, tie_notes
from curate.methods.base import MethodInfo, Selection, SelectionBuilder, encode
from curate.neighbours.search import kneighbors, require_neighbours
from curate.settings import Param
from curate.space.points import Space

__all__ = ["ALL_KNN", "ENN", "RENN", "all_knn", "enn", "renn"]


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
    require_neighbours(k, space.n, where="enn: ")
    names, codes = encode(labels)
    wrong, dist, nbr = enn_pass(space, codes, k, vote)
    out = SelectionBuilder(space.n)
    rows = np.flatnonzero(wrong & removable)
    add_vote_records(out, rows, rows, codes, names, nbr, dist, space=space)
    return out.selection()


_K = Param("k", int, 3, "neighbours that vote", low=1)
_VOTE = Param("vote", str, "majority", "majority: removed when the k-NN vote misclassifies "
              "the row; unanimous: removed unless all k neighbours agree",
              choices=("majority", "unanimous"))
_OUTVOTED = {"knn-disagrees": "the k nearest neighbours vote for another label"}

ENN = MethodInfo(
    key="enn", name="Edited Nearest Neighbours (ENN)", family="editing",
    reference="Wilson 1972",
    purpose="remove likely mislabels: rows their k nearest neighbours vote against",
    compares_classes=True, catches=("label-flip",),
    judged_by_lists=True,
    func=enn,
    params=(_K, _VOTE),
    reasons=_OUTVOTED,
)


def renn(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
         k: int = 3, vote: str = "majority", max_rounds: int = 100) -> Selection:
    """Repeated ENN (Tomek 1976): run ENN on what is left until a round removes nothing.

    Round ``r`` judges every row still kept against the rows still kept
    (neighbours and vote as in :func:`enn`) and removes the outvoted ones; its
    audit records carry ``step = r``. Rows outside ``removable`` stay and vote.
    The stage stops when a round removes nothing, after ``max_rounds`` rounds,
    or when k or fewer rows are left; ``Selection.info`` says which
    (``stopped``) and how many rounds ran (``rounds``, counting a last round
    that removed nothing).

    imbalanced-learn's RepeatedEditedNearestNeighbours also stops early when a
    class would vanish or any class would fall below the original size of the
    smallest class; RENN as published has no such rule, and neither has this.
    Use ``max_rounds`` or the stage's ``max_removed_share`` to bound it.

    When not to use it: on small classes or thin class borders the repetition
    erodes the border and can wipe out a small class; prefer ENN there. With
    little label noise it removes more good rows than it finds mislabels.

    Examples
    --------
    With k = 1, row 6 ('b' at 2.6) is equally near rows 5 and 7; the lower
    position, row 5 ('a'), is its neighbour, so round 1 removes it. Round 2
    then finds row 7's nearest neighbour is row 5, and removes row 7.

    >>> x = [[0.1], [0.6], [1.2], [1.3], [2.0], [2.2], [2.6], [3.0]]
    >>> y = np.array(["a", "a", "a", "a", "a", "a", "b", "b"])
    >>> sel = renn(Space.from_matrix(x), y, removable=np.ones(8, bool), k=1)
    >>> sel.removed.tolist(), sel.step.tolist(), sel.info["stopped"]
    ([6, 7], [1, 2], 'no change')
    """
    require_neighbours(k, space.n, where="renn: ")
    names, codes = encode(labels)
    active = np.arange(space.n, dtype=np.int64)
    out = SelectionBuilder(space.n)
    stopped, rounds = "max_rounds", 0
    while rounds < max_rounds:
        if len(active) <= k:
            stopped = "too few rows"
            break
        rounds += 1
        wrong, dist, nbr = enn_pass(space, codes, k, vote, active)
        going = np.flatnonzero(wrong & removable[active])
        if len(going) == 0:
            stopped = "no change"
            break
        add_vote_records(out, active[going], going, codes, names, nbr, dist, step=rounds,
                         suffix=f"; removed in round {rounds}", space=space, reference=active)
        active = np.delete(active, going)
    return out.selection(info={"rounds": rounds, "stopped": stopped})


RENN = MethodInfo(
    key="renn", name="Repeated Edited Nearest Neighbours (RENN)", family="editing",
    reference="Tomek 1976",
    purpose="remove likely mislabels more thoroughly than ENN: repeat ENN on the rows left "
            "until nothing changes",
    compares_classes=True, catches=("label-flip",),
    func=renn,
    params=(_K, _VOTE,
            Param("max_rounds", int, 100, "stop after this many rounds even if rows still go",
                  low=1)),
    reasons=_OUTVOTED,
)


def all_knn(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
            k: int = 3, vote: str = "majority") -> Selection:
    """All k-NN (Tomek 1976): remove a row that the vote of its j nearest neighbours
    misclassifies for any j = 1..k, every vote taken on the original set.

    The j nearest neighbours are the first j of the k nearest (ties in distance
    broken by position, so they are exactly what ENN with k = j would use). A
    removed row's audit ``step`` is the smallest j that misclassifies it, and
    its evidence is that vote.

    This follows the published rule. imbalanced-learn's AllKNN differs: it runs
    ENN with j = 1, then j = 2 on what j = 1 left, and so on, each on the
    result of the previous one, and it stops early when a class would vanish or
    fall below the smallest class's size. With k = 1 both are plain ENN.

    When not to use it: its removals are a superset of ENN's at every j up to
    k, so on clean data or small classes it removes more good border rows than
    ENN; the 1-NN vote alone removes any row whose nearest neighbour differs.

    Examples
    --------
    Row 3 ('a' at 3) has a 'b' nearest neighbour; rows 4 and 5 ('b' at 3.5
    and 3.7) have a 'b' nearest neighbour, tie 1-1 at j = 2 (a tie is not
    against them), and are outvoted 2-1 at j = 3.

    >>> x = [[0.0], [1.0], [2.0], [3.0], [3.5], [3.7], [8.0], [9.0]]
    >>> y = np.array(["a", "a", "a", "a", "b", "b", "b", "b"])
    >>> sel = all_knn(Space.from_matrix(x), y, removable=np.ones(8, bool), k=3)
    >>> sel.removed.tolist(), sel.step.tolist()
    ([3, 4, 5], [1, 3, 3])
    """
    require_neighbours(k, space.n, where="all-knn: ")
    names, codes = encode(labels)
    dist, nbr = kneighbors(space, k)
    first = np.zeros(space.n, dtype=np.int64)
    counts = np.zeros((space.n, len(names)), dtype=np.int64)
    rows = np.arange(space.n)
    for j in range(1, k + 1):
        np.add.at(counts, (rows, codes[nbr[:, j - 1]]), 1)
        first[misclassified(counts, codes, vote) & removable & (first == 0)] = j
    out = SelectionBuilder(space.n)
    going = np.flatnonzero(first)
    notes = dict.fromkeys(going.tolist(), "")
    for j in np.unique(first[going]).tolist():
        at = going[first[going] == j]
        notes.update(zip(at.tolist(), tie_notes(space, at, dist[at, :j]), strict=True))
    for i in going:
        j = int(first[i])
        add_vote_records(out, np.array([i]), np.array([0]), codes, names,
                         nbr[i:i + 1, :j], dist[i:i + 1, :j], step=j, suffix=notes[int(i)])
    return out.selection()


ALL_KNN = MethodInfo(
    key="all-knn", name="All k-NN", family="editing", reference="Tomek 1976",
    purpose="remove likely mislabels that the vote of any neighbourhood size up to k "
            "gets wrong",
    compares_classes=True, catches=("label-flip",),
    judged_by_lists=True,
    func=all_knn,
    params=(Param("k", int, 3, "the largest number of neighbours that vote", low=1), _VOTE),
    reasons=_OUTVOTED,
)
