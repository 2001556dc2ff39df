"""Hybrid prototype selection: DROP3 and ICF.

Both first edit away likely mislabels with ENN, then drop the rows whose
neighbourhood makes them redundant, keeping mostly rows near class borders.
They shrink a set much further than editing alone, at a small cost in
nearest-neighbour accuracy.
"""

from __future__ import annotations

import numpy as np

from curate.errors import counted
from curate.methods._neighbourhood import nearest_enemy
from curate.methods._votes import describe_votes, enn_pass, tie_notes
from curate.methods.base import MethodInfo, Selection, SelectionBuilder, encode
from curate.neighbours.search import kneighbors, require_neighbours
from curate.settings import Param
from curate.space.points import Space

__all__ = ["DROP3", "ICF", "drop3", "icf"]

_FIRST_WIDTH = 32  # candidate neighbours fetched per row up front; refilled on demand
_SHOWN = 10  # local-set members listed as evidence for an ICF removal


class _NeighbourLists:
    """The ``size`` nearest rows of S for every row, kept current as S shrinks.

    One query fetches a sorted candidate list per row; as rows leave S, a
    row's list is refilled from its candidates, and a new query (among the
    rows still in S) runs only when the candidates are used up. Because S only
    shrinks, the first candidates still in S are exactly the nearest rows of S.
    """

    def __init__(self, space: Space, in_s: np.ndarray, size: int) -> None:
        # Candidates stay one compact array; lists and flags are plain Python, since
        # the bookkeeping touches a few items at a time and numpy's per-call overhead
        # would dominate.
        self.space, self.in_s, self.alive = space, in_s, in_s.tolist()
        width = min(space.n - 1, max(_FIRST_WIDTH, 4 * size))
        self.first = kneighbors(space, width)[1]
        self.refilled: dict[int, list[int]] = {}
        self.covers_all = [width == space.n - 1] * space.n
        self.ptr = [0] * space.n
        self.nbrs: list[list[int]] = []
        for a in range(space.n):
            first: list[int] = []
            while len(first) < size and (b := self._next(a, first)) >= 0:
                first.append(b)
            self.nbrs.append(first)

    def _next(self, a: int, current: list[int]) -> int:
        """Return the nearest row of S beyond ``current`` (a's list), or -1 if none is left."""
        alive = self.alive
        while True:
            cand = self.refilled[a] if a in self.refilled else self.first[a]
            i = self.ptr[a]
            while i < len(cand) and not alive[cand[i]]:
                i += 1
            if i < len(cand):
                self.ptr[a] = i + 1
                return int(cand[i])
            if self.covers_all[a]:
                return -1
            members = np.flatnonzero(self.in_s)
            available = len(members) - int(alive[a])
            width = min(available, max(_FIRST_WIDTH, 2 * len(cand)))
            found = kneighbors(self.space, width, queries=np.array([a]), reference=members,
                               exclude_self=alive[a])[1][0].tolist()
            held = set(current)
            self.refilled[a] = [b for b in found if b not in held]
            self.covers_all[a] = width == available
            self.ptr[a] = 0

    def associates(self) -> list[set[int]]:
        """For each row P, the rows that hold P in their list."""
        assoc: list[set[int]] = [set() for _ in range(self.space.n)]
        for a, lst in enumerate(self.nbrs):
            for b in lst:
                assoc[b].add(a)
        return assoc

    def remove(self, p: int, assoc: list[set[int]]) -> None:
        """Take ``p`` out of S; each row holding it takes its next nearest row instead."""
        self.in_s[p] = self.alive[p] = False
        for a in sorted(assoc[p]):
            self.nbrs[a].remove(p)
            b = self._next(a, self.nbrs[a])
            if b >= 0:
                self.nbrs[a].append(b)
                assoc[b].add(a)


def _correct(codes: list[int], a: int, nbrs: list[int]) -> bool:
    """Whether the vote of ``nbrs`` gives row ``a`` its own label.

    The same rule as :func:`curate.methods.editing.misclassified` (majority):
    a tie for the most votes that includes its own label counts as correct.
    """
    if not nbrs:
        return False
    votes = [codes[b] for b in nbrs]
    return votes.count(codes[a]) >= max(votes.count(v) for v in set(votes))


def _with_without(p: int, group: list[int], lists: _NeighbourLists, codes: list[int],
                  k: int) -> tuple[int, int]:
    """Associates of ``p`` classified correctly by their k nearest in S, with and without p."""
    with_p = without_p = 0
    for a in group:
        lst = lists.nbrs[a]
        with_p += _correct(codes, a, lst[:k])
        without_p += _correct(codes, a, [b for b in lst if b != p][:k])
    return with_p, without_p


def _noise_pass(space: Space, codes: np.ndarray, names: np.ndarray, k: int,
                active: np.ndarray, removable: np.ndarray, out: SelectionBuilder, step: int) -> np.ndarray:
    """One ENN pass among ``active`` rows; record removals; return the removed positions."""
    wrong, dist, nbr = enn_pass(space, codes, k, "majority", active=active)
    gone = np.flatnonzero(wrong & removable[active])
    notes = tie_notes(space, active[gone], dist[gone], reference=active)
    for i, note in zip(gone, notes, strict=True):
        counts = np.bincount(codes[nbr[i]], minlength=len(names))
        out.add(int(active[i]), "noise",
                describe_votes(counts, names, int(codes[active[i]])) + note,
                neighbours=nbr[i], distances=dist[i], step=step)
    return active[gone]


def drop3(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
          k: int = 3) -> Selection:
    """DROP3 (Wilson and Martinez 2000): ENN noise pass, then the associates rule.

    1. Noise pass: rows misclassified by their k nearest neighbours (ENN) leave
       (reason ``noise``, step 1).
    2. Every row of the original set (noise rows included: DROP2, on which
       DROP3 builds, judges a removal by its effect on all of T) keeps its
       k+1 nearest rows among the remaining set S; its *associates* are the
       rows holding it in such a list.
    3. Rows of S are visited furthest-from-their-nearest-enemy first (ties by
       position). P leaves (reason ``associates``) when at least as many of its
       associates are classified correctly by their k nearest rows of S
       without P as with P; the associates that lost P take their next nearest
       row of S. ``step`` = 1 + the visit number, so it replays the order.

    When not to use it: when the kept set must stay representative of class
    densities (it keeps mostly border rows, which skews class proportions and
    any density estimate), or when later stages need interior rows.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [2.0], [3.0], [10.0], [11.0], [12.0], [13.0]])
    >>> y = np.array(["a"] * 4 + ["b"] * 4)
    >>> drop3(s, y, removable=np.ones(8, bool), k=1).kept.tolist()
    [2, 3, 4, 5]
    """
    require_neighbours(k, space.n, where="drop3: ")
    names, codes = encode(labels)
    out = SelectionBuilder(space.n)
    noise = _noise_pass(space, codes, names, k, np.arange(space.n), removable, out, 1)
    in_s = np.ones(space.n, dtype=bool)
    in_s[noise] = False
    lists = _NeighbourLists(space, in_s, min(k + 1, space.n - 1))
    assoc = lists.associates()
    code_list = codes.tolist()
    members = np.flatnonzero(in_s)
    enemy = nearest_enemy(space, codes, members)[0]
    order = members[np.lexsort((members, -enemy))]
    for visit, p in enumerate(order, start=2):
        if not removable[p]:
            continue
        group = sorted(assoc[p])
        with_p, without_p = _with_without(int(p), group, lists, code_list, k)
        if without_p < with_p:
            continue
        lists.remove(int(p), assoc)
        out.add(int(p), "associates",
                f"of its {counted(len(group), 'associate')}, {without_p} "
                f"{'is' if without_p == 1 else 'are'} classified correctly without it and "
                f"{with_p} with it", neighbours=group,
                distances=space.distances([p], group)[0] if group else [], step=visit)
    return out.selection(info={"noise_removed": len(noise),
                               "associates_removed": len(out) - len(noise)})


def _closer_than(space: Space, queries: np.ndarray, reference: np.ndarray,
                 limits: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Reference rows strictly closer to each query than its limit: (query index, pos, dist).

    Queries are reference rows (themselves excluded). The neighbour count per
    query doubles until the furthest one reached is at or beyond the limit.
    """
    available = len(reference) - 1
    out: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    todo, width = np.arange(len(queries)), min(available, _FIRST_WIDTH)
    while len(todo) and width > 0:
        block = max(1, 2**22 // width)  # bound the (queries x width) result
        left = []
        for s in range(0, len(todo), block):
            part = todo[s:s + block]
            d, p = kneighbors(space, width, queries=queries[part], reference=reference)
            done = (d[:, -1] >= limits[part]) | (width == available)
            rows, cols = np.nonzero((d < limits[part, None]) & done[:, None])
            out.append((part[rows], p[rows, cols], d[rows, cols]))
            left.append(part[~done])
        todo, width = np.concatenate(left), min(available, 2 * width)
    if not out:
        return np.zeros(0, np.int64), np.zeros(0, np.int64), np.zeros(0)
    q, p, d = (np.concatenate(x) for x in zip(*out, strict=True))
    order = np.lexsort((d, q))  # by query, nearest first (stable over position ties)
    return q[order], p[order], d[order]


def _local_sets(space: Space, codes: np.ndarray, active: np.ndarray
                ) -> tuple[np.ndarray, np.ndarray, list[tuple[np.ndarray, np.ndarray]]]:
    """Per active row: reachable count, coverage count and its nearest local-set members.

    The local set of x holds the rows (of its label, necessarily) closer to x
    than x's nearest enemy. Reachable(x) is x's local set; Coverage(x) is the
    set of rows whose local set holds x.
    """
    enemy = nearest_enemy(space, codes, active)[0]
    reach = np.zeros(len(active), dtype=np.int64)
    cover = np.zeros(space.n, dtype=np.int64)
    shown: list[tuple[np.ndarray, np.ndarray]] = [(np.zeros(0, np.int64), np.zeros(0))] * len(active)
    for c in np.unique(codes[active]):
        idx = np.flatnonzero(codes[active] == c)
        q, p, d = _closer_than(space, active[idx], active[idx], enemy[idx])
        np.add.at(cover, p, 1)
        counts = np.bincount(q, minlength=len(idx))
        reach[idx] = counts
        starts = np.concatenate([[0], np.cumsum(counts)[:-1]])
        for j in np.flatnonzero(counts):
            sl = slice(starts[j], starts[j] + min(counts[j], _SHOWN))
            shown[idx[j]] = (p[sl], d[sl])
    return reach, cover[active], shown


def icf(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
        k: int = 3) -> Selection:
    """ICF, Iterative Case Filtering (Brighton and Mellish 2002).

    1. Repeated ENN with k neighbours until no row changes (reason ``noise``).
    2. Rounds: for every remaining row compute its reachable set (the rows
       of its local set: closer to it than its nearest enemy) and its
       coverage set (the rows whose local set holds it); every row whose
       reachable set is larger than its coverage set leaves at once (reason
       ``reachable``). Repeat until a round removes nothing.

    ``step`` numbers the passes that removed rows, across both phases.

    When not to use it: like DROP3 it keeps mostly border rows and so skews
    class proportions and densities; and on data with little class overlap it
    can keep very few rows per class, which makes the kept set sensitive to
    later drift.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [2.0], [3.0], [5.0], [6.0]])
    >>> y = np.array(["a"] * 4 + ["b"] * 2)
    >>> icf(s, y, removable=np.ones(6, bool), k=1).kept.tolist()
    [2, 3, 4, 5]
    """
    require_neighbours(k, space.n, where="icf: ")
    names, codes = encode(labels)
    out = SelectionBuilder(space.n)
    active, step = np.arange(space.n), 0
    while len(active) > k:
        gone = _noise_pass(space, codes, names, k, active, removable, out, step + 1)
        if len(gone) == 0:
            break
        step += 1
        active = np.setdiff1d(active, gone)
    noise = len(out)
    while True:
        reach, cover, shown = _local_sets(space, codes, active)
        flag = np.flatnonzero((reach > cover) & removable[active])
        if len(flag) == 0:
            break
        step += 1
        for i in flag:
            out.add(int(active[i]), "reachable",
                    f"{reach[i]} same-label rows are closer to it than its nearest enemy, "
                    f"but it is in the local set of only {cover[i]}",
                    neighbours=shown[i][0], distances=shown[i][1], step=step)
        active = np.delete(active, flag)
    return out.selection(info={"noise_removed": noise, "reachable_removed": len(out) - noise,
                               "passes": step})


DROP3 = MethodInfo(
    key="drop3", name="DROP3 (Decremental Reduction Optimization Procedure 3)", family="hybrid",
    reference="Wilson and Martinez 2000",
    purpose="shrink the set to border rows: ENN noise pass, then remove rows whose associates "
            "are classified at least as well without them",
    compares_classes=True, runs_partitioned=True,
    func=drop3,
    params=(Param("k", int, 3, "neighbours for the noise pass and for classifying associates",
                  low=1),),
    reasons={"noise": "misclassified by its k nearest neighbours in the noise-filter pass",
             "associates": "its associates are classified at least as well without it"},
)

ICF = MethodInfo(
    key="icf", name="ICF (Iterative Case Filtering)", family="hybrid",
    reference="Brighton and Mellish 2002",
    purpose="shrink the set to border rows: repeated ENN, then remove rows reached by more "
            "rows than they cover",
    compares_classes=True, runs_partitioned=True,
    func=icf,
    params=(Param("k", int, 3, "neighbours for the repeated ENN noise pass", low=1),),
    reasons={"noise": "misclassified by its k nearest neighbours in the repeated ENN pass",
             "reachable": "more rows can classify it (its local set) than it can classify "
                          "(its coverage)"},
)
