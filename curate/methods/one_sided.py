"""One-sided selection (OSS, Kubat and Matwin 1997): condense the large classes, then clean borders.

The paper works with two classes: all rows of the small ("positive") class
stay; the other class is reduced in two steps.

1. C holds every row of the small class and one randomly drawn row of the
   other class. Every other row of that class is labelled by 1-NN over C, in
   one go; the rows it mislabels join C, the rest leave as ``redundant``.
2. Rows of the reduced class that form a Tomek link inside C (Tomek 1976)
   leave as ``tomek-link``.

With more than two classes each other class is reduced against the small
class alone, with its own drawn row (one-vs-one, as imbalanced-learn's
OneSidedSelection does); the Tomek links are then found among all rows C
kept. Given the same drawn rows, the kept rows are the same as
imbalanced-learn's (``sampling_strategy="auto"``, ``n_seeds_S=1``) wherever
no two rows are equally near. Differences, by design: the drawn row comes
from :func:`numpy.random.default_rng` (use :func:`one_sided_with_draws` to
give it), rows that may not be removed join C from the start, the small class
is never removed (the paper keeps all positives), and a row's nearest
neighbour skips the row itself by position, not by distance 0.
"""

from __future__ import annotations

import numpy as np

from curate.methods._neighbourhood import interest_class, tomek_links
from curate.methods.base import MethodInfo, Selection, SelectionBuilder, encode
from curate.neighbours.search import kneighbors
from curate.settings import Param
from curate.space.points import Space

__all__ = ["OSS", "draw_rows", "one_sided_selection", "one_sided_with_draws"]


def draw_rows(codes: np.ndarray, small: int, removable: np.ndarray, seed: int) -> dict[int, int]:
    """Draw one row per class to reduce (every class but ``small`` with a removable row).

    Classes are visited in label order and drawn from with
    ``numpy.random.default_rng(seed)``, uniformly among all rows of the class.

    Examples
    --------
    >>> codes = np.array([0, 0, 0, 1, 1, 2])
    >>> sorted(draw_rows(codes, 2, np.ones(6, bool), seed=3))
    [0, 1]
    """
    rng = np.random.default_rng(seed)
    draws = {}
    for c in range(int(codes.max(initial=-1)) + 1):
        rows = np.flatnonzero(codes == c)
        if c != small and len(rows) and removable[rows].any():
            draws[c] = int(rows[rng.integers(len(rows))])
    return draws


def _condense_against(space: Space, codes: np.ndarray, small_rows: np.ndarray, c: int,
                      drawn: int, removable: np.ndarray) -> tuple[np.ndarray, np.ndarray,
                                                                 np.ndarray, np.ndarray]:
    """Step 1 for class c: (rows that join C, redundant rows, their 1-NN in C, distances)."""
    rows = np.flatnonzero(codes == c)
    start = np.union1d(np.union1d(small_rows, [drawn]), rows[~removable[rows]])
    asked = np.setdiff1d(rows, start)
    if len(asked) == 0:
        return start, asked, asked, np.zeros(0)
    dist, pos = kneighbors(space, 1, queries=asked, reference=start, exclude_self=False)
    wrong = codes[pos[:, 0]] != c
    right = ~wrong
    return (np.union1d(start, asked[wrong]), asked[right], pos[right, 0], dist[right, 0])


def one_sided_with_draws(space: Space, labels: np.ndarray, *, removable: np.ndarray,
                         small: int, draws: dict[int, int]) -> Selection:
    """OSS with the small class (a label code) and the drawn row per reduced class given.

    ``draws`` maps the code of each class to reduce to the position of its
    drawn row; classes not in it are kept whole.

    Examples
    --------
    Row 2 is mislabelled by C = rows 0, 1, 6 and joins it, then forms a
    Tomek link with row 1; rows 3 to 5 are labelled right by C.

    >>> s = Space.from_matrix([[0.0], [0.4], [0.5], [1.0], [1.1], [1.2], [1.3]])
    >>> y = np.array(["a", "a", "b", "b", "b", "b", "b"])
    >>> sel = one_sided_with_draws(s, y, removable=np.ones(7, bool), small=0, draws={1: 6})
    >>> sel.kept.tolist(), sel.removed.tolist(), sel.reason
    ([0, 1, 6], [3, 4, 5, 2], ['redundant', 'redundant', 'redundant', 'tomek-link'])
    """
    names, codes = encode(labels)
    removable = np.asarray(removable, dtype=bool)
    small_rows = np.flatnonzero(codes == small)
    in_c = ~np.isin(codes, list(draws))
    redundant = []
    for c, drawn in sorted(draws.items()):
        joined, gone, by, dist = _condense_against(space, codes, small_rows, c, drawn, removable)
        in_c[joined] = True
        redundant.append((gone, by, dist))
    kept_c = np.flatnonzero(in_c)
    links = _links(space, labels, kept_c, removable[kept_c] & (codes[kept_c] != small))
    linked = set(kept_c[links.removed].tolist())
    out = SelectionBuilder(space.n)
    for gone, by, dist in redundant:
        for i, j, d in zip(gone.tolist(), by.tolist(), dist.tolist(), strict=True):
            out.add(i, "redundant",
                    f"1-NN over the class {str(names[small])!r} and the rows kept of its own "
                    f"class labels it correctly, as {str(names[codes[i]])!r}, at distance {d:.4g}",
                    neighbours=[j], distances=[d], kept_as=-1 if j in linked else j, step=1)
    for r, i in enumerate(links.removed.tolist()):
        partner = kept_c[links.neighbours[r]]
        out.add(int(kept_c[i]), "tomek-link", links.detail[r], neighbours=partner,
                distances=links.distances[r],
                kept_as=int(kept_c[links.kept_as[r]]) if links.kept_as[r] >= 0 else -1, step=2)
    return out.selection(info={"links": links.info.get("links", 0), "small": str(names[small])})


def _links(space: Space, labels: np.ndarray, rows: np.ndarray, removable: np.ndarray) -> Selection:
    """Step 2: Tomek links among ``rows`` (positions in the returned Selection are into rows)."""
    if len(rows) < 2:
        return SelectionBuilder(len(rows)).selection(info={"links": 0})
    return tomek_links(space.subset(rows), labels[rows], removable=removable)


def one_sided_selection(space: Space, labels: np.ndarray, *, removable: np.ndarray,
                        seed: int = 0, interest: str | int = "smallest") -> Selection:
    """One-sided selection (Kubat and Matwin 1997); see the module text for the steps.

    ``interest`` names the class kept whole (the paper's positive class), or
    ``"smallest"`` for the class with the fewest rows (first label on ties).

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [0.1], [0.9], [1.0], [1.1], [1.2], [1.3]])
    >>> y = np.array(["a", "a", "b", "b", "b", "b", "b"])
    >>> sel = one_sided_selection(s, y, removable=np.ones(7, bool), seed=1)
    >>> {0, 1} <= set(sel.kept.tolist())
    True
    """
    names, codes = encode(labels)
    removable = np.asarray(removable, dtype=bool)
    if space.n == 0:
        return SelectionBuilder(0).selection()
    small = interest_class(names, codes, interest)
    return one_sided_with_draws(space, labels, removable=removable, small=small,
                                draws=draw_rows(codes, small, removable, seed))


OSS = MethodInfo(
    key="oss", name="One-Sided Selection (OSS)", family="condensing",
    reference="Kubat and Matwin 1997",
    purpose="shrink the large classes of an imbalanced set: drop rows 1-NN already labels "
            "right, then rows on Tomek links, and keep the small class whole",
    compares_classes=True, runs_partitioned=True,
    func=one_sided_selection,
    params=(Param("interest", (str, int), "smallest", "the class kept whole: 'smallest' or "
                  "a label"),),
    reasons={"redundant": "1-NN over the small class and the kept rows of its own class "
                          "labels it correctly",
             "tomek-link": "it forms a Tomek link with a row of another class among the rows "
                           "kept by the first step"},
)
