"""Shared neighbourhood facts: nearest enemies, the class of interest, Tomek links.

Private to :mod:`curate.methods`: the editing, condensing and hybrid families
use these instead of importing each other. :func:`tomek_links` is the method
registered as ``tomek-links`` (declared in :mod:`curate.methods.cleaning`) and
also the second step of one-sided selection.
"""

from __future__ import annotations

import numpy as np

from curate.errors import UsageError
from curate.methods.base import Selection, SelectionBuilder, encode
from curate.neighbours.search import kneighbors, require_neighbours
from curate.space.points import Space

__all__ = ["interest_class", "nearest_enemy", "tomek_links"]


def nearest_enemy(space: Space, codes: np.ndarray,
                  active: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Distance and position of each active row's nearest active row with another label.

    Rows with no such row get distance ``inf`` and position -1.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [3.0]])
    >>> d, p = nearest_enemy(s, np.array([0, 0, 1]))
    >>> d.tolist(), p.tolist()
    ([3.0, 2.0, 2.0], [2, 2, 1])
    """
    pos = np.arange(space.n) if active is None else np.asarray(active, dtype=np.int64)
    dist = np.full(len(pos), np.inf)
    where = np.full(len(pos), -1, dtype=np.int64)
    for c in np.unique(codes[pos]):
        mine = codes[pos] == c
        if mine.all():
            continue
        d, p = kneighbors(space, 1, queries=pos[mine], reference=pos[~mine], exclude_self=False)
        dist[mine], where[mine] = d[:, 0], p[:, 0]
    return dist, where


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
    require_neighbours(1, space.n, where="tomek-links: ")
    names, codes = encode(labels)
    dist, nbr = kneighbors(space, 1)
    near = nbr[:, 0]
    linked = (near[near] == np.arange(space.n)) & (codes[near] != codes)
    going = linked & removable
    if remove == "larger":
        sizes = np.bincount(codes)
        going &= sizes[codes] >= sizes[codes[near]]
    out = SelectionBuilder(space.n)
    for i in np.flatnonzero(going):
        j = int(near[i])
        out.add(int(i), "tomek-link",
                f"its nearest neighbour, labelled {str(names[codes[j]])!r}, has it as its own "
                f"nearest neighbour, and its label {str(names[codes[i]])!r} differs",
                neighbours=[j], distances=dist[i], kept_as=-1 if going[j] else j)
    return out.selection(info={"links": int(linked.sum()) // 2})
