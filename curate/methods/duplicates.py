"""Copies: exact copies with the same label, copies whose labels conflict, and near copies.

Near copies (``near-duplicates``) use a greedy *leader* scheme rather than connected components of
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

from curate.errors import UsageError, counted
from curate.methods._copies import equal_groups
from curate.methods._neighbourhood import nearest_enemy
from curate.methods.base import MethodInfo, Selection, SelectionBuilder, encode
from curate.neighbours.search import kneighbors, radius_neighbors
from curate.settings import Param
from curate.space.points import Space

__all__ = ["CONFLICTING", "EXACT", "NEAR", "conflicting_duplicates", "distance_profile",
           "exact_duplicates", "near_duplicates"]


def exact_duplicates(space: Space, labels: np.ndarray, *, removable: np.ndarray,
                     seed: int = 0) -> Selection:
    """Remove rows whose feature values and label equal an earlier row's.

    The first row of each group stays (or the first one that may not be
    removed); the others leave with ``kept_as`` pointing to it.

    Examples
    --------
    >>> s = Space.from_matrix([[1.0], [2.0], [1.0], [1.0]])
    >>> sel = exact_duplicates(s, np.array(["a", "a", "a", "b"]), removable=np.ones(4, bool))
    >>> sel.removed.tolist(), sel.kept_as.tolist()
    ([2], [0])
    """
    _, label_codes = encode(labels)
    ident = space.identity_codes()
    key = ident * (int(label_codes.max(initial=0)) + 1) + label_codes.reshape(-1)
    out = SelectionBuilder(space.n)
    for group in equal_groups(key):
        fixed = group[~removable[group]]
        keeper = int(fixed[0]) if len(fixed) else int(group[0])
        for pos in group:
            if pos != keeper and removable[pos]:
                out.add(int(pos), "exact-copy",
                        "same feature values and label as an earlier row, which is kept "
                        f"({len(group)} copies)",
                        neighbours=[keeper], distances=[0.0], kept_as=keeper)
    return out.selection()


def _conflict_group(group: np.ndarray, labels: np.ndarray, policy: str,
                    removable: np.ndarray, out: SelectionBuilder) -> None:
    values, counts = np.unique(labels[group], return_counts=True)
    top = values[counts == counts.max()]
    keeper = -1
    if policy == "keep-majority" and len(top) == 1:
        keeper = int(group[labels[group] == top[0]][0])
    for pos in group:
        if pos == keeper or not removable[pos]:
            continue
        others = group[group != pos]
        if keeper < 0:
            reason = "conflict-tie" if policy == "keep-majority" else "conflicting-copy"
            detail = (f"same feature values as {len(others)} other rows, labelled "
                      f"{', '.join(repr(str(v)) for v in values)}")
        elif labels[pos] == labels[keeper]:
            reason, detail = "conflict-repeat", "a repeat of the majority-label row it is kept_as"
        else:
            reason = "conflict-outvoted"
            detail = (f"same feature values as {len(others)} other rows; its label "
                      f"{str(labels[pos])!r} is outvoted by {str(top[0])!r}")
        out.add(int(pos), reason, detail, neighbours=others,
                distances=np.zeros(len(others)), kept_as=keeper)


def conflicting_duplicates(space: Space, labels: np.ndarray, *, removable: np.ndarray,
                           seed: int = 0, policy: str = "drop-all") -> Selection:
    """Handle rows with equal feature values but different labels.

    ``drop-all`` removes every row of such a group; ``keep-majority`` keeps the
    first row of the most frequent label (a tie drops all); ``report`` removes
    nothing and lists the groups.

    Examples
    --------
    >>> s = Space.from_matrix([[1.0], [1.0], [2.0], [1.0]])
    >>> y = np.array(["a", "b", "a", "a"])
    >>> conflicting_duplicates(s, y, removable=np.ones(4, bool)).removed.tolist()
    [0, 1, 3]
    >>> sel = conflicting_duplicates(s, y, removable=np.ones(4, bool), policy="keep-majority")
    >>> sel.removed.tolist(), sel.reason
    ([1, 3], ['conflict-outvoted', 'conflict-repeat'])
    """
    ident = space.identity_codes()
    conflicted = [g for g in equal_groups(ident) if len(np.unique(labels[g])) > 1]
    out = SelectionBuilder(space.n)
    if policy != "report":
        for group in conflicted:
            _conflict_group(group, labels, policy, removable, out)
    info: dict[str, Any] = {"conflicting_groups": len(conflicted),
                            "rows_in_conflicting_groups": int(sum(len(g) for g in conflicted))}
    return out.selection(info=info, groups=conflicted)


EXACT = MethodInfo(
    key="exact-duplicates", name="exact duplicates", family="duplicates",
    reference="common practice",
    purpose="drop re-sent rows: equal feature values and equal label; keeps the first",
    func=exact_duplicates, params=(), uses_neighbours=False, catches=("re-sent",),
    reasons={"exact-copy": "same feature values and label as an earlier, kept row"},
)

CONFLICTING = MethodInfo(
    key="conflicting-duplicates", name="conflicting-label duplicates", family="duplicates",
    reference="common practice",
    purpose="rows with equal feature values but different labels: drop, resolve by majority, "
            "or report",
    func=conflicting_duplicates, uses_neighbours=False, catches=("conflict",),
    params=(Param("policy", str, "drop-all", "what to do with a conflicting group",
                  choices=("drop-all", "keep-majority", "report")),),
    reasons={
        "conflicting-copy": "same feature values as rows with another label (drop-all)",
        "conflict-tie": "conflicting group with no single most frequent label (keep-majority)",
        "conflict-outvoted": "its label is not the group's most frequent one (keep-majority)",
        "conflict-repeat": "a further copy of the kept majority-label row (keep-majority)",
    },
)


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
             removable: np.ndarray, alive: np.ndarray, out: SelectionBuilder) -> int:
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
    out = SelectionBuilder(space.n)
    alive = np.ones(space.n, dtype=bool)
    if conflicts == "drop":
        for g in groups:
            for i in g[removable[g]]:
                other = codes[nbr[i]] != codes[i]
                out.add(int(i), "near-conflict",
                        f"{counted(int(other.sum()), 'row')} with another label "
                        f"{'lies' if other.sum() == 1 else 'lie'} within the radius",
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


NEAR = MethodInfo(
    key="near-duplicates", name="near duplicates (radius, leader scheme)", family="duplicates",
    reference="common practice",
    purpose="drop same-label rows within a radius of a kept row (jittered re-sends); "
            "report or drop rows within the radius of another label",
    func=near_duplicates, catches=("re-sent", "near-copy"),
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
