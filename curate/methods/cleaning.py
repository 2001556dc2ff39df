"""Cleaning class borders: Tomek links and the neighbourhood cleaning rule (NCR).

Both remove rows where two classes overlap rather than rows that look
mislabelled on their own: a Tomek link is a pair of rows from different
classes that are each other's nearest neighbour; NCR adds to ENN the rows that
crowd the misclassified members of a class of interest.
"""

from __future__ import annotations

import numpy as np

from curate.errors import counted
from curate.methods._neighbourhood import interest_class, tomek_links
from curate.methods._votes import add_vote_records, misclassified, tie_notes, vote_counts
from curate.methods.base import MethodInfo, Selection, SelectionBuilder, encode
from curate.neighbours.search import kneighbors, require_neighbours
from curate.settings import Param
from curate.space.points import Space

__all__ = ["NCR", "TOMEK_LINKS", "ncr", "tomek_links"]


TOMEK_LINKS = MethodInfo(
    key="tomek-links", name="Tomek links", family="editing", reference="Tomek 1976",
    purpose="clean class borders: remove pairs of rows from different classes that are "
            "each other's nearest neighbour",
    compares_classes=True, catches=("label-flip",),
    judged_by_lists=True,
    func=tomek_links,
    params=(Param("remove", str, "both", "both: every member of a link that the stage may "
                  "remove; larger: only the member from the larger class",
                  choices=("both", "larger")),),
    reasons={"tomek-link": "it and its nearest neighbour are each other's nearest neighbour "
                           "and their labels differ"},
)


def _crowding(codes: np.ndarray, nbr: np.ndarray, dist: np.ndarray, missed: np.ndarray,
              cleanable: np.ndarray) -> dict[int, list[tuple[int, float]]]:
    """For each row of a cleanable class: the missed rows whose k neighbours include it."""
    crowd: dict[int, list[tuple[int, float]]] = {}
    for c in missed:
        for j, d in zip(nbr[c], dist[c], strict=True):
            if cleanable[codes[j]]:
                crowd.setdefault(int(j), []).append((int(c), float(d)))
    return crowd


def ncr(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
        k: int = 3, threshold: float = 0.5, interest: str | int = "smallest") -> Selection:
    """Laurikkala's neighbourhood cleaning rule (2001).

    Let C be the class of interest (``interest``: the smallest class, the
    first label in sorted order on ties, or a label named as written) and O
    all other rows. NCR removes the union of
    A1, the rows of O that ENN removes (k nearest neighbours among all rows,
    majority vote, see :func:`~curate.methods.editing.misclassified`), and
    A2, the rows of O among the k nearest neighbours of a row of C that its k
    nearest neighbours misclassify, counting only classes with at least
    ``threshold`` times as many rows as C (the paper: |Ci| >= 0.5 |C|). Rows
    of C are never removed; ``removable`` restricts the rest further. A row in
    both sets is recorded as A1 and its detail says it is also in A2.

    Differences from imbalanced-learn 0.14's NeighbourhoodCleaningRule: with
    ``sampling_strategy="all"`` it also edits C and removes C's own
    neighbours, which the paper does not ("not minority" matches it); it
    predicts C's rows with a classifier fitted on all rows, so each row votes
    for itself among its k; it cleans classes with strictly more than
    ``threshold`` |C| rows; on ties in class size it takes the first label in
    row order as C.

    When not to use it: when no class matters more than another, plain ENN
    is simpler; with a class of interest smaller than about k rows, its
    misclassified rows are mostly its whole class and A2 strips its area.

    Examples
    --------
    Row 3 ('c', the smallest class) sits among 'a' rows, which outvote it.
    NCR keeps it, and removes its 3 nearest neighbours, rows 1, 2 and 4.

    >>> x = [[0.0], [0.2], [0.4], [0.5], [0.6], [5.0], [5.1], [5.2], [9.0], [9.1], [9.2]]
    >>> y = np.array(["a", "a", "a", "c", "a", "c", "c", "c", "a", "a", "a"])
    >>> sel = ncr(Space.from_matrix(x), y, removable=np.ones(11, bool))
    >>> sel.removed.tolist(), sel.reason[0], [n.tolist() for n in sel.neighbours]
    ([1, 2, 4], 'crowds-interest', [[3], [3], [3]])
    """
    require_neighbours(k, space.n, where="ncr: ")
    names, codes = encode(labels)
    target = interest_class(names, codes, interest)
    dist, nbr = kneighbors(space, k)
    counts = vote_counts(codes, nbr, len(names))
    wrong = misclassified(counts, codes, "majority")
    sizes = np.bincount(codes, minlength=len(names))
    cleanable = sizes >= threshold * sizes[target]
    cleanable[target] = False
    a1 = wrong & (codes != target) & removable
    crowd = _crowding(codes, nbr, dist, np.flatnonzero(wrong & (codes == target)), cleanable)
    a2 = np.zeros(space.n, dtype=bool)
    a2[list(crowd)] = True
    out = SelectionBuilder(space.n)
    label = repr(str(names[target]))
    outvoted = np.flatnonzero(a1)
    ties = dict(zip(outvoted.tolist(), tie_notes(space, outvoted, dist[outvoted]), strict=True))
    for i in np.flatnonzero(a1 | (a2 & removable)):
        near = sorted(crowd.get(int(i), []), key=lambda pair: (pair[1], pair[0]))
        if a1[i]:
            also = (f"; it is also among the {counted(k, 'nearest neighbour')} of "
                    f"{len(near)} outvoted {label} {'row' if len(near) == 1 else 'rows'}"
                    ) if near else ""
            add_vote_records(out, np.array([i]), np.array([i]), codes, names, nbr, dist,
                             suffix=ties[int(i)] + also)
            continue
        mine = int(counts[near[0][0], target])
        out.add(int(i), "crowds-interest",
                f"it is among the {counted(k, 'nearest neighbour')} of "
                f"{counted(len(near), label + ' row')} that their neighbours outvote (the "
                f"nearest of them has {mine} of {k} votes for {label})",
                neighbours=[c for c, _ in near], distances=[d for _, d in near])
    return out.selection(info={"interest": str(names[target]),
                               "cleaned_classes": [str(n) for n in names[cleanable]]})


NCR = MethodInfo(
    key="ncr", name="Neighbourhood cleaning rule (NCR)", family="editing",
    reference="Laurikkala 2001",
    purpose="sharpen a small class of interest: remove other-class rows that ENN outvotes "
            "or that crowd its misclassified rows",
    compares_classes=True, catches=("label-flip",),
    judged_by_lists=True,
    func=ncr,
    params=(
        Param("k", int, 3, "neighbours that vote and that are cleaned", low=1),
        Param("threshold", float, 0.5, "clean a class's rows only if it has at least this "
              "many times as many rows as the class of interest", low=0.0),
        Param("interest", (str, int), "smallest", "the class of interest: 'smallest' or a "
              "label as written in the table"),
    ),
    reasons={
        "knn-disagrees": "the k nearest neighbours vote for another label",
        "crowds-interest": "among the k nearest neighbours of a row of the class of interest "
                           "that its neighbours misclassify",
    },
)
