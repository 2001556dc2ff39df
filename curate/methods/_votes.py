"""Shared by the families that let neighbours vote: vote counts, the k-NN rule, vote records.

Private to :mod:`curate.methods`: a family module imports these helpers
instead of importing another family.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from curate.methods.base import SelectionBuilder
from curate.neighbours.calls import recording
from curate.neighbours.search import kneighbors, radius_neighbors
from curate.space.points import Space

__all__ = ["add_vote_records", "describe_votes", "enn_pass", "misclassified", "tie_notes",
           "vote_counts"]


def _ordinal(n: int) -> str:
    """1st, 2nd, 3rd, 4th, ..., 11th, 12th, 13th, 21st, ...

    Examples
    --------
    >>> [_ordinal(n) for n in (1, 2, 3, 4, 11, 12, 13, 21, 22)]
    ['1st', '2nd', '3rd', '4th', '11th', '12th', '13th', '21st', '22nd']
    """
    end = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{end}"


def tie_notes(space: Space, positions: np.ndarray, distances: np.ndarray,
              reference: np.ndarray | None = None) -> list[str]:
    """Say, for each row, when rows outside its k nearest lie at its k-th neighbour's distance.

    ``distances`` holds the rows' k neighbour distances (one line per row of
    ``positions``), found among ``reference`` (every row when None) with the
    row itself left out. Ties in distance are broken by input position, so a
    row whose k-th neighbour is tied with rows outside its list was judged by
    the first of them; the note says how many others there were. The check
    is cheap: one search for the (k+1)-th neighbour of these rows only, and a
    radius count at the k-th distance only for rows where the two are equal.
    Both are exact (also in a stage that uses the approximate engine) and stay
    out of the stage's engine summary, since they only word the evidence.

    Examples
    --------
    Row 0 has rows 1, 2 and 3 at distance 1 and a vote of k = 1:

    >>> s = Space.from_matrix([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [-1.0, 0.0], [5.0, 6.0]])
    >>> tie_notes(s, np.array([0, 4]), np.array([[1.0], [np.sqrt(50.0)]]))
    ['; its nearest neighbour is tied with 2 other rows at distance 1; the first by input \
position was used', '']
    """
    positions = np.asarray(positions, dtype=np.int64)
    notes = [""] * len(positions)
    k = distances.shape[1] if distances.ndim == 2 else 0
    size = space.n if reference is None else len(reference)
    if len(positions) == 0 or k == 0 or size - 1 <= k:
        return notes
    if space.engine.backend == "approximate":
        space = replace(space, engine=replace(space.engine, backend="auto"))  # exact facts
    # These searches only word the evidence: they stay out of the stage's engine summary.
    with recording():
        wider, _ = kneighbors(space, k + 1, queries=positions, reference=reference)
        kth = wider[:, k - 1]
        # Where an approximate search listed another k-th distance, the exact tie is not its.
        tied = np.flatnonzero((wider[:, k] <= kth) & (kth == distances[:, k - 1]))
        counted = [(group, radius_neighbors(space, float(radius), queries=positions[group],
                                            reference=reference)[1])
                   for radius in np.unique(kth[tied]) for group in [tied[kth[tied] == radius]]]
    for group, found_lists in counted:
        radius = float(kth[group[0]])
        for i, found in zip(group, found_lists, strict=True):
            others = max(len(found), k + 1) - k
            which = "its nearest neighbour" if k == 1 else f"its {_ordinal(k)} nearest neighbour"
            notes[i] = (f"; {which} is tied with {others} other row{'' if others == 1 else 's'} "
                        f"at distance {radius:.4g}; the first by input position "
                        f"{'was' if k == 1 else 'were'} used")
    return notes

MANY = 64  # from this many records on, words are built once per distinct vote


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
                     step: int = 1, suffix: str = "", space: Space | None = None,
                     reference: np.ndarray | None = None) -> None:
    """Record ``positions`` as outvoted; ``rows`` index their lines in ``nbr``/``dist``.

    With ``space`` (and the ``reference`` rows the neighbours were found
    among), each detail also says when the k-th neighbour was tied with rows
    outside the vote (see :func:`tie_notes`).

    Examples
    --------
    >>> out = SelectionBuilder(3)
    >>> add_vote_records(out, np.array([2]), np.array([0]), np.array([0, 0, 1]),
    ...                  np.array(["ok", "worn"]), np.array([[1, 0]]), np.array([[1.0, 2.0]]))
    >>> out.selection().detail
    ["2 of its 2 nearest neighbours are labelled 'ok', none 'worn' (its own label)"]
    """
    positions, rows = np.asarray(positions, dtype=np.int64), np.asarray(rows, dtype=np.int64)
    notes = ([""] * len(positions) if space is None else
             tie_notes(space, positions, dist[rows], reference))
    if len(positions) < MANY:
        for pos, row, note in zip(positions, rows, notes, strict=True):
            counts = np.bincount(codes[nbr[row]], minlength=len(names))
            out.add(int(pos), "knn-disagrees",
                    describe_votes(counts, names, int(codes[pos])) + note + suffix,
                    neighbours=nbr[row], distances=dist[row], step=step)
        return
    # Many rows share a vote (counts and own label): word each distinct vote once.
    lines = nbr[rows]
    votes = np.column_stack([vote_counts(codes, lines, len(names)), codes[positions]])
    distinct, which = np.unique(votes, axis=0, return_inverse=True)
    words = [describe_votes(v[:-1], names, int(v[-1])) for v in distinct]
    out.add_many(positions, "knn-disagrees",
                 [words[w] + note + suffix for w, note in zip(which.reshape(-1), notes, strict=True)],
                 neighbours=lines, distances=dist[rows], step=step)
