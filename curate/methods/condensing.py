"""Condensing: keep only the rows a 1-NN lookup needs to label every input row correctly.

A kept set is *consistent* (Hart 1968) when 1-NN over the kept rows labels
every input row with its own label. CNN (Hart 1968) and FCNN (Angiulli 2007)
grow such a set; RNN (Gates 1972) shrinks CNN's set while it stays
consistent. Rows with identical features and different labels can never all
be labelled correctly: each method then keeps the conflicting rows (the
second of such a pair joins the store because its twin mislabels it), so the
result is consistent up to such conflicts. Remove conflicting copies first
(``conflicting-duplicates``) to get a strictly consistent set.

Every removed row's ``kept_as`` is its nearest kept row at the end, which
carries the same label: that is exactly why 1-NN labels it correctly. Ties in
distance go to the lower position. Rows that may not be removed start in the
store. One-sided selection (OSS) lives in :mod:`curate.methods.one_sided`.
"""

from __future__ import annotations

import numpy as np

from curate.methods._store import LIST_LENGTH, NearestStore
from curate.methods.base import MethodInfo, Selection, SelectionBuilder, encode
from curate.neighbours.search import kneighbors
from curate.settings import Param
from curate.space.distance import pairwise
from curate.space.points import Space

__all__ = ["CNN", "FCNN", "RNN", "cnn", "fcnn", "rnn"]

_ABSORBED = {"absorbed": "1-NN over the kept rows labels it correctly: its nearest kept row "
                         "(kept_as) has the same label"}


def presentation(n: int, order: str, seed: int) -> np.ndarray:
    """The order in which CNN looks at the rows: seeded shuffle or input order.

    Examples
    --------
    >>> presentation(4, "input", 0).tolist()
    [0, 1, 2, 3]
    >>> sorted(presentation(4, "shuffled", 7).tolist())
    [0, 1, 2, 3]
    """
    if order == "input":
        return np.arange(n, dtype=np.int64)
    return np.random.default_rng(seed).permutation(n).astype(np.int64)


def _condense(space: Space, codes: np.ndarray, removable: np.ndarray, seed: int,
              order: str) -> tuple[NearestStore, int]:
    """Hart's CNN; returns the store and the number of passes."""
    presented = presentation(space.n, order, seed)
    store = NearestStore(space)
    fixed = np.flatnonzero(~removable)
    # Hart starts from one row; rows that must stay are a better start when there are any.
    store.add(fixed if len(fixed) else presented[:1], when=0)
    return store, store.hart(codes, presented)


def _absorbed(out: SelectionBuilder, rows: np.ndarray, near: np.ndarray, dist: np.ndarray,
              names: np.ndarray, codes: np.ndarray, step: int) -> None:
    for i in rows:
        j = int(near[i])
        out.add(int(i), "absorbed",
                f"1-NN over the kept rows labels it correctly: its nearest kept row has the "
                f"same label {str(names[codes[i]])!r}, at distance {dist[i]:.4g}",
                neighbours=[j], distances=[dist[i]], kept_as=j, step=step)


def cnn(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
        order: str = "shuffled") -> Selection:
    """Hart's condensed nearest neighbour rule (CNN).

    Rows are presented in a seeded random order (``order="shuffled"``) or in
    input order. The store starts with the rows that may not be removed, or,
    when every row may go, with the first row presented (Hart 1968). Each row
    whose nearest store member carries another label joins the store at once;
    passes repeat until one adds nothing, so the store is consistent. The rest
    are removed as ``absorbed``; ``step`` is the number of passes.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [0.1], [0.2], [1.0], [1.1], [1.2]])
    >>> y = np.array(["a", "a", "a", "b", "b", "b"])
    >>> sel = cnn(s, y, removable=np.ones(6, bool), order="input")
    >>> sel.kept.tolist(), sel.kept_as.tolist()
    ([0, 3], [0, 0, 3, 3])
    """
    out = SelectionBuilder(space.n)
    if space.n == 0:
        return out.selection(info={"passes": 0})
    names, codes = encode(labels)
    store, passes = _condense(space, codes, np.asarray(removable, dtype=bool), seed, order)
    near, dist = store.nearest()
    _absorbed(out, np.flatnonzero(~store.in_store), near, dist, names, codes, passes)
    return out.selection(info={"passes": passes})


def class_centres(space: Space, codes: np.ndarray) -> np.ndarray:
    """Per class, the row nearest to the class's mean (ties: lower position).

    Under distances with missing values kept, the mean and the distances to it
    use the embedded matrix only: the choice just seeds FCNN.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [3.0], [9.0], [10.0]])
    >>> class_centres(s, np.array([0, 0, 0, 1, 1])).tolist()
    [1, 3]
    """
    metric = "manhattan" if space.metric.startswith("manhattan") else "euclidean"
    out = []
    for c in np.unique(codes):
        rows = np.flatnonzero(codes == c)
        centre = space.matrix[rows].mean(axis=0, keepdims=True)
        out.append(rows[int(np.argmin(pairwise(centre, space.matrix[rows], metric)[0]))])
    return np.asarray(out, dtype=np.int64)


def _nearest_enemies(store: NearestStore, codes: np.ndarray, outside: np.ndarray) -> np.ndarray:
    """For each store member, the nearest row in its Voronoi cell that it mislabels."""
    enemies = outside[codes[store.near[outside]] != codes[outside]]
    owner = store.near[enemies]
    ranked = np.lexsort((enemies, store.best[enemies], owner))
    owner = owner[ranked]
    first = np.ones(len(ranked), dtype=bool)
    first[1:] = owner[1:] != owner[:-1]
    return enemies[ranked][first]


def fcnn(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0) -> Selection:
    """Angiulli's fast condensed nearest neighbour rule (FCNN1).

    The store starts with each class's row nearest to the class mean (and the
    rows that may not be removed). Then, until nothing changes, every store
    member adds the nearest of the rows in its Voronoi cell (rows whose
    nearest member it is) that it mislabels. The result does not depend on
    the row order, needs no seed, and is consistent. Each step compares rows
    only with the members that joined since (Angiulli 2007); ``step`` of a
    removed row is the number of steps. Prefer it to CNN for large inputs.
    One difference from the paper's pseudo-code: of two equally near members
    the one at the lower position counts, as everywhere in curate (the paper
    keeps the one that joined first); without ties the two agree.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [0.1], [0.2], [1.0], [1.1], [1.2]])
    >>> y = np.array(["a", "a", "a", "b", "b", "b"])
    >>> fcnn(s, y, removable=np.ones(6, bool)).kept.tolist()
    [1, 4]
    """
    out = SelectionBuilder(space.n)
    if space.n == 0:
        return out.selection(info={"steps": 0})
    names, codes = encode(labels)
    # FCNN asks for every outside row's nearest member in one batch per round, which
    # costs rows x new members; a full neighbour list per row would cost more than
    # the whole run on large inputs (measured: 2.4x slower at 50,000 rows).
    store = NearestStore(space, list_length=0)
    new = np.union1d(class_centres(space, codes), np.flatnonzero(~np.asarray(removable, bool)))
    steps = 0
    while len(new):
        steps += 1
        store.add(new, when=steps)
        outside = np.flatnonzero(~store.in_store)
        store.refresh(outside)
        new = _nearest_enemies(store, codes, outside)
    near, dist = store.nearest()
    _absorbed(out, np.flatnonzero(~store.in_store), near, dist, names, codes, steps)
    return out.selection(info={"steps": steps})


def _walk(space: Space, q: int, lists: np.ndarray, dists: np.ndarray, start: int,
          alive: np.ndarray) -> tuple[int, float, int, tuple[np.ndarray, np.ndarray] | None]:
    """Row q's nearest alive member: (member, distance, list index, fresh list or None)."""
    row = lists[q]
    p = start
    while p < len(row) and not alive[row[p]]:
        p += 1
    if p < len(row):
        return int(row[p]), float(dists[q, p]), p, None
    # Every listed member has left: list the nearest of those still alive, once.
    ref = np.flatnonzero(alive)
    if len(ref) == 0:
        return -1, np.inf, p, None
    d, pos = kneighbors(space, min(lists.shape[1], len(ref)), queries=np.array([q]),
                        reference=ref, exclude_self=False)
    pad = lists.shape[1] - pos.shape[1]
    fresh = (np.pad(pos[0], (0, pad), mode="edge"), np.pad(d[0], (0, pad), mode="edge"))
    return int(pos[0, 0]), float(d[0, 0]), 0, fresh


class _Reduction:
    """Gates's reduction of a consistent store: members leave while every row stays right."""

    def __init__(self, space: Space, codes: np.ndarray, store: NearestStore) -> None:
        self.space, self.codes = space, codes
        self.alive = store.in_store.copy()
        members = np.sort(store.members)
        # Each row's nearest members, listed once and walked as members leave.
        dists, lists = kneighbors(space, min(LIST_LENGTH, len(members)), reference=members,
                                  exclude_self=False)
        self.lists, self.dists = lists.copy(), dists.copy()
        self.ptr = np.zeros(space.n, dtype=np.int64)
        self.near, self.dist = lists[:, 0].copy(), dists[:, 0].copy()
        self.pointing: dict[int, list[int]] = {}
        for q, m in enumerate(self.near.tolist()):
            self.pointing.setdefault(m, []).append(q)

    def try_remove(self, s: int) -> bool:
        """Remove member s if every row it was nearest to is still labelled correctly."""
        near, codes = self.near, self.codes
        if near[s] != s and codes[near[s]] != codes[s]:
            return False  # a conflicting twin labels s; s would have no right kept_as
        self.alive[s] = False
        moves = []
        for q in self.pointing.get(s, []):
            if near[q] != s:
                continue  # moved on to another member earlier
            m, d, p, fresh = _walk(self.space, q, self.lists, self.dists, self.ptr[q], self.alive)
            if m < 0 or codes[m] != codes[q]:
                self.alive[s] = True
                return False
            moves.append((q, m, d, p, fresh))
        for q, m, d, p, fresh in moves:
            if fresh is not None:
                self.lists[q], self.dists[q] = fresh
            near[q], self.dist[q], self.ptr[q] = m, d, p
            self.pointing.setdefault(m, []).append(q)
        self.pointing.pop(s, None)
        return True


def rnn(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
        order: str = "shuffled") -> Selection:
    """Gates's reduced nearest neighbour rule (RNN): CNN, then drop members it can spare.

    First CNN (same ``order`` and seed). Then each store member, in the order
    it joined, leaves if every input row is still labelled correctly by 1-NN
    over the remaining store; only the rows whose nearest member it was can
    change, so only those are checked (Gates 1972). The result is a subset of
    CNN's and stays consistent. Rows CNN left out are ``absorbed`` (step: CNN's
    passes); store members removed here are ``reduced`` (step: one more).

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [0.1], [0.2], [1.0], [1.1], [1.2]])
    >>> y = np.array(["a", "a", "a", "b", "b", "b"])
    >>> cnn(s, y, removable=np.ones(6, bool), order="input", seed=0).kept.tolist()
    [0, 3]
    >>> rnn(s, y, removable=np.ones(6, bool), order="input").kept.tolist()
    [0, 3]
    """
    out = SelectionBuilder(space.n)
    if space.n == 0:
        return out.selection(info={"passes": 0})
    names, codes = encode(labels)
    removable = np.asarray(removable, dtype=bool)
    store, passes = _condense(space, codes, removable, seed, order)
    cut = _Reduction(space, codes, store)
    left = store.size
    for s in store.members.tolist():
        if removable[s] and left > 1 and cut.try_remove(s):
            left -= 1
    absorbed = np.flatnonzero(~store.in_store)
    _absorbed(out, absorbed, cut.near, cut.dist, names, codes, passes)
    for i in np.flatnonzero(store.in_store & ~cut.alive):
        j = int(cut.near[i])
        out.add(int(i), "reduced",
                f"CNN kept it, but every row stays labelled correctly without it; its nearest "
                f"remaining kept row has the same label {str(names[codes[i]])!r}, at distance "
                f"{cut.dist[i]:.4g}",
                neighbours=[j], distances=[cut.dist[i]], kept_as=j, step=passes + 1)
    return out.selection(info={"passes": passes, "cnn_kept": int(store.size)})

CNN = MethodInfo(
    key="cnn", name="Condensed Nearest Neighbour (CNN)", family="condensing",
    reference="Hart 1968",
    purpose="shrink the set to rows that 1-NN needs to label every input row correctly",
    compares_classes=True, runs_partitioned=True,
    func=cnn,
    params=(Param("order", str, "shuffled", "the order rows are presented in: shuffled "
                  "(seeded random order) or input (the order of the table)",
                  choices=("shuffled", "input")),),
    reasons=dict(_ABSORBED),
)

FCNN = MethodInfo(
    key="fcnn", name="Fast Condensed Nearest Neighbour (FCNN)", family="condensing",
    reference="Angiulli 2007",
    purpose="shrink the set to rows that 1-NN needs, independent of row order and fast on "
            "large inputs",
    compares_classes=True, runs_partitioned=True,
    func=fcnn,
    params=(),
    reasons=dict(_ABSORBED),
)

RNN = MethodInfo(
    key="rnn", name="Reduced Nearest Neighbour (RNN)", family="condensing",
    reference="Gates 1972",
    purpose="shrink CNN's result further while 1-NN still labels every input row correctly",
    compares_classes=True, runs_partitioned=True,
    func=rnn,
    params=CNN.params,
    reasons={**_ABSORBED,
             "reduced": "CNN kept it, but 1-NN over the kept rows labels every input row "
                        "correctly without it"},
)
