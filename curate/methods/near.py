"""Near copies within a radius, and the k-disagreeing-neighbours hardness score.

Near copies use a greedy *leader* scheme rather than connected components of
the radius graph: components chain (a row can be pulled into a group whose
representative is far beyond the radius), leaders do not. Rows are visited in
position order; a row within ``radius`` of a kept leader of its label leaves
with that leader as ``kept_as``, otherwise it becomes a leader itself. Rows
that may not be removed are leaders from the start. This guarantees:

* every removed copy is within ``radius`` of its ``kept_as``, which has the
  same label and is kept;
* no two kept rows of the same label are within ``radius`` of each other,
  unless both are rows that may not be removed.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from curate.errors import UsageError
from curate.methods.base import MethodInfo, Param, Removals, Selection, encode, require_rows
from curate.neighbours import kneighbors, radius_neighbors
from curate.space import Space

__all__ = ["HARDNESS", "NEAR", "distance_profile", "hardness", "kdn_scores",
           "near_duplicates", "nearest_enemy"]


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


def _nearest_friend(space: Space, codes: np.ndarray) -> np.ndarray:
    """Distance from each row to its nearest other row of the same label (inf if alone)."""
    dist = np.full(space.n, np.inf)
    for c in np.unique(codes):
        mine = np.flatnonzero(codes == c)
        if len(mine) > 1:
            dist[mine] = kneighbors(space, 1, queries=mine, reference=mine)[0][:, 0]
    return dist


def _conflicts(codes: np.ndarray, nbr: list[np.ndarray]) -> tuple[list[np.ndarray], int]:
    """Groups of rows linked by other-label neighbours within the radius, and the pair count."""
    rows = np.repeat(np.arange(len(nbr)), [len(p) for p in nbr])
    cols = np.concatenate(nbr) if nbr else np.zeros(0, dtype=np.int64)
    cross = codes[rows] != codes[cols]
    rows, cols = rows[cross], cols[cross]
    graph = coo_matrix((np.ones(len(rows)), (rows, cols)), shape=(len(nbr), len(nbr)))
    _, comp = connected_components(graph, directed=False)
    involved = np.unique(rows)
    groups: dict[int, list[int]] = {}
    for r in involved:  # ascending, so groups come out ordered by their first row
        groups.setdefault(int(comp[r]), []).append(int(r))
    return [np.asarray(g, dtype=np.int64) for g in groups.values()], len(rows) // 2


def _leaders(codes: np.ndarray, nbr: list[np.ndarray], dist: list[np.ndarray],
             removable: np.ndarray, alive: np.ndarray, out: Removals) -> int:
    """Run the leader scheme over ``alive`` rows; return the number of groups with copies."""
    leader = alive & ~removable
    followed = np.zeros(len(codes), dtype=bool)
    for i in np.flatnonzero(alive & removable):
        hit = np.flatnonzero(leader[nbr[i]] & (codes[nbr[i]] == codes[i]))
        if len(hit) == 0:
            leader[i] = True
            continue
        j, d = int(nbr[i][hit[0]]), float(dist[i][hit[0]])  # lists are nearest first
        followed[j] = True
        out.add(int(i), "near-copy",
                f"same label as row kept_as, at distance {d:.4g} within the radius",
                neighbours=[j], distances=[d], kept_as=j)
    return int(followed.sum())


def near_duplicates(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
                    radius: float | None = None, conflicts: str = "report") -> Selection:
    """Keep one row per group of same-label rows within ``radius``; report label conflicts.

    See the module docstring for the leader scheme and what it guarantees.
    Rows within ``radius`` of a row with another label are conflicting:
    ``conflicts="report"`` counts them in ``info`` and lists them in
    ``groups`` (connected through such pairs); ``"drop"`` also removes them
    (before the copies are grouped, so they never serve as representatives).

    When not to use it: when close rows are genuinely distinct cases (dense
    data where ``radius`` is not far below the typical nearest-neighbour
    distance; see :func:`distance_profile`), or before a method that relies
    on local density.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [0.05], [0.08], [1.0], [1.02]])
    >>> y = np.array(["a", "a", "a", "a", "b"])
    >>> sel = near_duplicates(s, y, removable=np.ones(5, bool), radius=0.06)
    >>> sel.removed.tolist(), sel.kept_as.tolist(), sel.info["conflicting_rows"]
    ([1], [0], 2)
    """
    if radius is None:
        raise UsageError("near-duplicates: parameter 'radius' is required",
                         hint="set radius to a distance > 0 in the normalised space; "
                              "distance_profile shows the typical nearest-neighbour distances")
    _, codes = encode(labels)
    dist, nbr = radius_neighbors(space, radius)
    groups, pairs = _conflicts(codes, nbr)
    out = Removals(space.n)
    alive = np.ones(space.n, dtype=bool)
    if conflicts == "drop":
        for g in groups:
            for i in g[removable[g]]:
                other = codes[nbr[i]] != codes[i]
                out.add(int(i), "near-conflict",
                        f"{int(other.sum())} rows with another label lie within the radius",
                        neighbours=nbr[i][other], distances=dist[i][other])
                alive[i] = False
    dropped = len(out)
    copied = _leaders(codes, nbr, dist, removable, alive, out)
    info: dict[str, Any] = {
        "radius": float(radius), "conflicts": conflicts, "near_copies_removed": len(out) - dropped,
        "groups_with_copies": copied, "conflicting_rows": int(sum(len(g) for g in groups)),
        "conflicting_pairs": pairs, "conflict_groups": len(groups), "conflicts_removed": dropped,
    }
    return out.selection(info=info, groups=groups)


def _quantiles(values: np.ndarray, qs: tuple[float, ...]) -> dict[str, float | None]:
    finite = values[np.isfinite(values)]
    if len(finite) == 0:
        return {f"{q:g}": None for q in qs}
    return {f"{q:g}": float(v) for q, v in zip(qs, np.quantile(finite, qs), strict=True)}


def distance_profile(space: Space, labels: np.ndarray, *, radii: list[float] | None = None,
                     quantiles: tuple[float, ...] = (0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9)
                     ) -> dict[str, Any]:
    """Describe nearest-neighbour distances so that a user can choose a near-copy radius.

    Returns a JSON-serialisable dict: quantiles of the distance from each
    row to its nearest same-label row and to its nearest other-label row,
    and for each candidate radius (by default the 1%, 5%, 10% and 25%
    quantiles of the same-label distance, zeros left out) how many rows have
    a same-label row within it, how many the leader scheme would remove and
    how many conflict with another label.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [0.1], [0.5], [2.0]])
    >>> p = distance_profile(s, np.array(["a", "a", "a", "b"]), radii=[0.2])
    >>> p["candidates"]
    [{'radius': 0.2, 'rows_with_same_label_within': 2, 'would_remove': 1, 'conflicting_rows': 0}]
    """
    _, codes = encode(labels)
    friend = _nearest_friend(space, codes)
    enemy = nearest_enemy(space, codes)[0]
    if radii is None:
        finite = friend[np.isfinite(friend)]
        picks = np.quantile(finite, (0.01, 0.05, 0.1, 0.25)) if len(finite) else np.zeros(0)
        radii = sorted({float(r) for r in picks if r > 0})
    candidates = []
    for r in radii:
        sel = near_duplicates(space, labels, removable=np.ones(space.n, dtype=bool), radius=r)
        candidates.append({"radius": float(r),
                           "rows_with_same_label_within": int((friend <= r).sum()),
                           "would_remove": len(sel.removed),
                           "conflicting_rows": int((enemy <= r).sum())})
    return {"rows": space.n, "metric": space.metric,
            "rows_alone_in_their_label": int(np.isinf(friend).sum()),
            "nearest_same_label": _quantiles(friend, quantiles),
            "nearest_other_label": _quantiles(enemy, quantiles),
            "candidates": candidates}


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
    require_rows(space.n, k, "hardness")
    _, codes = encode(labels)
    scores, dist, nbr = kdn_scores(space, codes, k)
    out = Removals(space.n)
    if threshold is not None:
        for i in np.flatnonzero((scores >= threshold) & removable):
            other = int(round(scores[i] * k))
            out.add(int(i), "hard",
                    f"{other} of its {k} nearest neighbours have another label "
                    f"(kDN {scores[i]:.3g} >= threshold {threshold:g})",
                    neighbours=nbr[i], distances=dist[i])
    sel = out.selection(info={"k": k, "threshold": threshold,
                              "mean_hardness": float(scores.mean()) if space.n else 0.0})
    sel.scores["hardness"] = scores
    return sel


NEAR = MethodInfo(
    key="near-duplicates", name="near duplicates (radius, leader scheme)", family="duplicates",
    reference="common practice",
    purpose="drop same-label rows within a radius of a kept row (jittered re-sends); "
            "report or drop rows within the radius of another label",
    func=near_duplicates,
    params=(
        Param("radius", float, None, "distance in the normalised space within which rows of "
              "the same label are copies", check=lambda v: v > 0,
              check_says="greater than 0", required=True),
        Param("conflicts", str, "report", "rows within the radius of a row with another "
              "label: report them, or drop them", choices=("report", "drop")),
    ),
    reasons={"near-copy": "within the radius of a kept row with the same label",
             "near-conflict": "within the radius of a row with another label (conflicts = drop)"},
)

HARDNESS = MethodInfo(
    key="hardness", name="instance hardness, k-disagreeing neighbours (kDN)", family="scores",
    reference="Smith, Martinez and Giraud-Carrier 2014",
    purpose="score each row by the share of its k nearest neighbours with another label; "
            "optionally remove rows at or above a threshold",
    func=hardness,
    params=(
        Param("k", int, 5, "neighbours that are compared with the row's label", low=1),
        Param("threshold", float, None, "remove rows whose kDN is at least this (none: score "
              "only)", check=lambda v: 0 < v <= 1, check_says="greater than 0, at most 1"),
    ),
    reasons={"hard": "kDN (share of the k nearest neighbours with another label) at or above "
                     "the threshold"},
)
