"""Cleaning class borders: Tomek links and the neighbourhood cleaning rule (NCR).

Both remove rows where two classes overlap rather than rows that look
mislabelled on their own: a Tomek link is a pair of rows from different
classes that are each other's nearest neighbour; NCR adds to ENN the rows that
crowd the misclassified members of a class of interest.
"""

from __future__ import annotations

import numpy as np

from curate.errors import UsageError
from curate.methods.base import (
    MethodInfo,
    Param,
    Removals,
    Selection,
    encode,
    require_rows,
    vote_counts,
)
from curate.methods.editing import add_vote_records, misclassified
from curate.neighbours import kneighbors
from curate.space import Space

__all__ = ["NCR", "TOMEK_LINKS", "interest_class", "ncr", "tomek_links"]


def tomek_links(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
                remove: str = "both") -> Selection:
    """Remove the members of Tomek links (Tomek 1976).

    Rows i and j form a link when each is the other's nearest neighbour and
    their labels differ. A row's nearest neighbour is the closest other row;
    among rows at the same distance the one at the lower position counts, so
    every row has exactly one nearest neighbour. ``remove="both"`` removes
    each member of a link that ``removable`` allows; ``remove="larger"``
    removes only the member whose class has more rows in the stage (both when
    the two classes are the same size), the way under-sampling uses links to
    spare a small class. A removed row's ``kept_as`` is its partner when the
    partner stays.

    The same as imbalanced-learn's TomekLinks with ``sampling_strategy="all"``
    (``remove="both"``), apart from rows with two equally near neighbours,
    where scikit-learn's neighbour search does not promise an order.

    When not to use it: links only touch the very border, so one pass removes
    few rows and finds few mislabels in a class's interior; use ENN for that.
    With exact copies of opposite labels, every copy pair is a link.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [1.4], [3.0], [3.2]])
    >>> y = np.array(["a", "a", "b", "b", "b"])
    >>> sel = tomek_links(s, y, removable=np.array([True, True, True, True, True]))
    >>> sel.removed.tolist(), sel.kept_as.tolist()
    ([1, 2], [-1, -1])
    >>> sel = tomek_links(s, y, removable=np.array([True, False, True, True, True]))
    >>> sel.removed.tolist(), sel.kept_as.tolist()
    ([2], [1])
    """
    require_rows(space.n, 1, "tomek-links")
    names, codes = encode(labels)
    dist, nbr = kneighbors(space, 1)
    near = nbr[:, 0]
    linked = (near[near] == np.arange(space.n)) & (codes[near] != codes)
    going = linked & removable
    if remove == "larger":
        sizes = np.bincount(codes)
        going &= sizes[codes] >= sizes[codes[near]]
    out = Removals(space.n)
    for i in np.flatnonzero(going):
        j = int(near[i])
        out.add(int(i), "tomek-link",
                f"its nearest neighbour, labelled {str(names[codes[j]])!r}, has it as its own "
                f"nearest neighbour, and its label {str(names[codes[i]])!r} differs",
                neighbours=[j], distances=dist[i], kept_as=-1 if going[j] else j)
    return out.selection(info={"links": int(linked.sum()) // 2})


TOMEK_LINKS = MethodInfo(
    key="tomek-links", name="Tomek links", family="editing", reference="Tomek 1976",
    purpose="clean class borders: remove pairs of rows from different classes that are "
            "each other's nearest neighbour",
    func=tomek_links,
    params=(Param("remove", str, "both", "both: every member of a link that the stage may "
                  "remove; larger: only the member from the larger class",
                  choices=("both", "larger")),),
    reasons={"tomek-link": "it and its nearest neighbour are each other's nearest neighbour "
                           "and their labels differ"},
)


def interest_class(names: np.ndarray, codes: np.ndarray, interest: str | int) -> int:
    """Code of the class of interest: the named one, or the smallest (first label on ties).

    Examples
    --------
    >>> interest_class(np.array(["a", "b"]), np.array([0, 0, 1]), "smallest")
    1
    >>> interest_class(np.array(["a", "b"]), np.array([0, 0, 1]), "a")
    0
    """
    if interest == "smallest":
        return int(np.argmin(np.bincount(codes, minlength=len(names))))
    found = [c for c, name in enumerate(names) if str(name) == str(interest)]
    if not found:
        shown = ", ".join(repr(str(n)) for n in names[:10])
        raise UsageError(f"ncr: class of interest {interest!r} is not among the stage's labels",
                         hint=f"set interest to 'smallest' or to one of: {shown}")
    return found[0]


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
    require_rows(space.n, k, "ncr")
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
    out = Removals(space.n)
    label = repr(str(names[target]))
    for i in np.flatnonzero(a1 | (a2 & removable)):
        near = sorted(crowd.get(int(i), []), key=lambda pair: (pair[1], pair[0]))
        if a1[i]:
            also = (f"; it is also among the {k} nearest neighbours of {len(near)} outvoted "
                    f"{label} row(s)") if near else ""
            add_vote_records(out, np.array([i]), np.array([i]), codes, names, nbr, dist,
                             suffix=also)
            continue
        mine = int(counts[near[0][0], target])
        out.add(int(i), "crowds-interest",
                f"it is among the {k} nearest neighbours of {len(near)} {label} row(s) that "
                f"their neighbours outvote (the nearest of them has {mine} of {k} votes "
                f"for {label})",
                neighbours=[c for c, _ in near], distances=[d for _, d in near])
    return out.selection(info={"interest": str(names[target]),
                               "cleaned_classes": [str(n) for n in names[cleanable]]})


NCR = MethodInfo(
    key="ncr", name="Neighbourhood cleaning rule (NCR)", family="editing",
    reference="Laurikkala 2001",
    purpose="sharpen a small class of interest: remove other-class rows that ENN outvotes "
            "or that crowd its misclassified rows",
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
