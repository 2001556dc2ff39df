"""Editing, condensing and hardness for numeric targets.

RegENN and RegCNN (Kordos and Blachnik 2012) carry Wilson's editing and
Hart's condensing over to regression: a row's target is compared with what
its neighbourhood predicts for it, and the neighbourhood's own spread sets
how far off is too far. With ``alpha`` the threshold factor and ``sd`` the
standard deviation (ddof 0) of the targets of a row's k nearest neighbours
(the row itself excluded):

* RegENN removes a row whose target differs from the mean of those k
  neighbours' targets by more than ``alpha * sd``; every row is judged
  against the same, unedited table, as in ENN.
* RegCNN presents the rows in a seeded order (or input order) and keeps a
  row when the kept rows predict its target worse than ``alpha * sd``:
  the prediction is the mean target of its k nearest kept rows (all of them
  while fewer than k are kept). One pass, as published.

The paper's model inside both rules can be any regressor (they used a
neural network); here it is the k-nearest-neighbour mean, the model the rule
is usually paired with (from memory). The regression form of ``hardness``
scores each row by its absolute residual against its k neighbours' mean,
in standard deviations of the whole target.

Every method here gets each row's neighbours from one search of the engine.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from curate.methods._targets import (
    check_targets,
    neighbour_mean_std,
    scaled_residuals,
    target_spread,
    value_writer,
)
from curate.methods.base import MethodInfo, Selection, SelectionBuilder
from curate.neighbours.search import kneighbors, require_neighbours
from curate.settings import Param
from curate.space.points import Space

__all__ = ["REG_CNN", "REG_ENN", "REG_HARDNESS", "reg_cnn", "reg_enn", "regression_hardness"]

LIST_EXTRA = 16  # neighbours listed beyond k, so that most rows find k kept rows in their list
BLOCK = 512  # RegCNN rows whose nearest kept rows one engine search finds at once


def _deviation(write: Callable[[float], str], value: float, mean: float, sd: float,
               k: int) -> str:
    """'its target 41.0 h is 5.2 standard deviations from its 3 neighbours' mean 12.3 h'."""
    who = "its nearest neighbour's target" if k == 1 else f"its {k} nearest neighbours' mean"
    if sd == 0:
        return (f"its target {write(value)} differs from {who} {write(mean)}, and those "
                "neighbours' targets do not vary at all")
    return (f"its target {write(value)} is {abs(value - mean) / sd:.1f} standard deviations "
            f"from {who} {write(mean)} (their standard deviation {write(sd)})")


def reg_enn(space: Space, targets: np.ndarray, *, removable: np.ndarray, seed: int = 0,
            k: int = 9, alpha: float = 3.0, unit: str = "") -> Selection:
    """RegENN (Kordos and Blachnik 2012): remove rows whose target their neighbours do not expect.

    A row leaves when ``|y - mean| > alpha * sd``, with ``mean`` and ``sd``
    the mean and standard deviation (ddof 0) of its k nearest neighbours'
    targets, all rows judged against the unedited table. When the neighbours'
    targets are all equal (``sd = 0``; always so with k = 1) any difference
    removes the row: use a larger k on targets with many repeated values.

    Examples
    --------
    Rows at 0..5 carry targets 10, 11, 12, 40, 13, 14; with k = 2, row 3's
    neighbours (rows 2 and 4) have mean 12.5 and sd 0.5, and 40 is 55 sd away.

    >>> s = Space.from_matrix([[0.0], [1.0], [2.0], [3.0], [4.0], [5.0]])
    >>> y = np.array([10.0, 11.0, 12.0, 40.0, 13.0, 14.0])
    >>> sel = reg_enn(s, y, removable=np.ones(6, bool), k=2, alpha=3.0, unit="h")
    >>> sel.removed.tolist()
    [3]
    >>> sel.detail[0]
    "its target 40.0 h is 55.0 standard deviations from its 2 nearest neighbours' mean 12.5 h \
(their standard deviation 0.5 h), more than alpha = 3"
    """
    y = check_targets(targets, where="reg-enn")
    require_neighbours(k, space.n, where="reg-enn: ")
    dist, nbr = kneighbors(space, k)
    mean, sd = neighbour_mean_std(y, nbr)
    off = np.abs(y - mean)
    write = value_writer(y, unit)
    out = SelectionBuilder(space.n)
    for i in np.flatnonzero((off > alpha * sd) & removable):
        out.add(int(i), "target-off",
                _deviation(write, y[i], mean[i], sd[i], k) + f", more than alpha = {alpha:g}",
                neighbours=nbr[i], distances=dist[i])
    return out.selection(info={"k": k, "alpha": alpha})


def _presented(n: int, order: str, seed: int) -> np.ndarray:
    if order == "input":
        return np.arange(n, dtype=np.int64)
    return np.random.default_rng(seed).permutation(n).astype(np.int64)


class _KeptRows:
    """The growing kept set of RegCNN and each row's m nearest kept rows in it.

    A row's listed neighbours (nearest first, ties by position) that are kept
    are exactly its nearest kept rows as long as the list holds enough of them:
    every unlisted row is farther, or as near at a higher position. Rows whose
    list falls short get their k nearest kept rows from one engine search per
    block of presented rows (:meth:`search_block`); rows that joined since that
    search are then compared one by one, and the union's m nearest are exact.
    """

    def __init__(self, space: Space, dist: np.ndarray, nbr: np.ndarray, k: int) -> None:
        self.space, self.dist, self.nbr, self.k = space, dist, nbr, k
        self.kept = np.zeros(space.n, dtype=bool)
        self.members: list[int] = []
        self.found: dict[int, tuple[np.ndarray, np.ndarray]] = {}
        self.searched = 0  # members when the block's search ran

    def add(self, i: int) -> None:
        self.kept[i] = True
        self.members.append(i)

    def search_block(self, rows: np.ndarray) -> None:
        """The k nearest kept rows, as the kept set stands now, of the block's rows that need them."""
        want = np.array([r for r in rows if not self.kept[r]
                         and self.kept[self.nbr[r]].sum() < self.k], dtype=np.int64)
        self.searched, self.found = len(self.members), {}
        if len(want):
            d, p = kneighbors(self.space, min(self.k, self.searched), queries=want,
                              reference=np.asarray(self.members, dtype=np.int64),
                              exclude_self=False)
            self.found = {int(r): (p[j], d[j]) for j, r in enumerate(want)}

    def nearest(self, i: int, m: int) -> tuple[np.ndarray, np.ndarray]:
        listed = self.kept[self.nbr[i]]
        if listed.sum() >= m:
            return self.nbr[i][listed][:m], self.dist[i][listed][:m]
        near, near_d = self.found[i]
        joined = np.asarray(self.members[self.searched:], dtype=np.int64)
        if len(joined):
            near = np.concatenate([near, joined])
            near_d = np.concatenate([near_d, self.space.distances([i], joined)[0]])
        pick = np.lexsort((near, near_d))[:m]
        return near[pick], near_d[pick]


def reg_cnn(space: Space, targets: np.ndarray, *, removable: np.ndarray, seed: int = 0,
            k: int = 9, alpha: float = 0.5, order: str = "shuffled", unit: str = "") -> Selection:
    """RegCNN (Kordos and Blachnik 2012): keep only the rows the kept rows predict badly.

    The kept set starts with the rows that may not be removed, or else with
    the first row presented. Each other row, in presentation order, is
    predicted by the mean target of its ``min(k, kept)`` nearest kept rows;
    it joins the kept set when the error exceeds ``alpha * sd`` (``sd`` of its
    k nearest neighbours' targets among all rows), else it leaves with its
    nearest kept row as ``kept_as``. One pass, as published: a row judged
    early is not judged again when later rows join.

    Examples
    --------
    Two flat stretches (targets 1 and 9): the first row of each is kept and
    predicts the rest of its stretch exactly.

    >>> s = Space.from_matrix([[0.0], [0.1], [0.2], [5.0], [5.1], [5.2]])
    >>> y = np.array([1.0, 1.0, 1.0, 9.0, 9.0, 9.0])
    >>> sel = reg_cnn(s, y, removable=np.ones(6, bool), k=1, order="input")
    >>> sel.kept.tolist(), sel.kept_as.tolist()
    ([0, 3], [0, 0, 3, 3])
    """
    y = check_targets(targets, where="reg-cnn")
    require_neighbours(k, space.n, where="reg-cnn: ")
    dist, nbr = kneighbors(space, min(space.n - 1, k + LIST_EXTRA))
    _, sd = neighbour_mean_std(y, nbr[:, :k])
    limit = alpha * sd
    presented = _presented(space.n, order, seed)
    store = _KeptRows(space, dist, nbr, k)
    fixed = np.flatnonzero(~np.asarray(removable, dtype=bool))
    for i in fixed if len(fixed) else presented[:1]:
        store.add(int(i))
    write = value_writer(y, unit)
    out = SelectionBuilder(space.n)
    for start, i in enumerate(presented):
        if start % BLOCK == 0:
            store.search_block(presented[start:start + BLOCK])
        if store.kept[i]:
            continue
        near, near_d = store.nearest(int(i), min(k, len(store.members)))
        predicted = float(y[near].mean())
        error = abs(y[i] - predicted)
        if error > limit[i]:
            store.add(int(i))
            continue
        out.add(int(i), "predicted-well",
                f"the {len(near)} nearest kept rows predict its target {write(y[i])} as "
                f"{write(predicted)}, off by {write(error)}, within alpha = {alpha:g} times its "
                f"{k} nearest neighbours' standard deviation {write(sd[i])}",
                neighbours=near, distances=near_d, kept_as=int(near[0]))
    return out.selection(info={"k": k, "alpha": alpha, "kept": len(store.members)})


def regression_hardness(space: Space, targets: np.ndarray, *, removable: np.ndarray,
                        seed: int = 0, k: int = 5, threshold: float | None = None,
                        unit: str = "") -> Selection:
    """Score each row by its absolute residual against its k neighbours' mean, in target sds.

    ``score = |y - mean of the k nearest neighbours' targets| / sd(y)``, with
    ``sd(y)`` the standard deviation of every target the stage got. Scores go
    to ``Selection.scores["hardness"]``; rows at or above ``threshold`` leave
    when one is given.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [2.0], [3.0]])
    >>> sel = regression_hardness(s, np.array([1.0, 1.0, 5.0, 1.0]), removable=np.ones(4, bool),
    ...                           k=2, threshold=2.0)
    >>> sel.removed.tolist(), sel.scores["hardness"].round(3).tolist()
    ([2], [1.155, 1.155, 2.309, 1.155])
    """
    y = check_targets(targets, where="hardness")
    require_neighbours(k, space.n, where="hardness: ")
    dist, nbr = kneighbors(space, k)
    mean, sd = neighbour_mean_std(y, nbr)
    spread = target_spread(y)
    scores = scaled_residuals(y, mean, spread)
    write = value_writer(y, unit)
    out = SelectionBuilder(space.n)
    if threshold is not None:
        for i in np.flatnonzero((scores >= threshold) & removable):
            out.add(int(i), "hard",
                    f"its target {write(y[i])} is {scores[i]:.2f} standard deviations of the "
                    f"whole target ({write(spread)}) from its {k} nearest neighbours' mean "
                    f"{write(mean[i])}, at or above the threshold {threshold:g}",
                    neighbours=nbr[i], distances=dist[i])
    sel = out.selection(info={"k": k, "threshold": threshold, "spread": spread,
                              "mean_hardness": float(scores.mean())})
    sel.scores["hardness"] = scores
    return sel


_UNIT = Param("unit", str, "", "unit of the target, written after its values in the audit "
              "(such as \"h\")")
_ALPHA_SAYS = "greater than 0"

REG_ENN = MethodInfo(
    key="reg-enn", name="RegENN (edited nearest neighbours for regression)", family="editing",
    reference="Kordos and Blachnik 2012",
    purpose="remove likely wrong targets: rows whose target lies more than alpha standard "
            "deviations of their k nearest neighbours' targets from those neighbours' mean",
    func=reg_enn, catches=("outlier",), judged_by_lists=True,
    params=(Param("k", int, 9, "neighbours whose targets give the mean and the spread", low=1),
            Param("alpha", float, 3.0, "how many of the neighbours' standard deviations a "
                  "target may be off", check=lambda v: v > 0, check_says=_ALPHA_SAYS),
            _UNIT),
    reasons={"target-off": "its target is more than alpha standard deviations of its "
                           "neighbours' targets from their mean"},
)

REG_CNN = MethodInfo(
    key="reg-cnn", name="RegCNN (condensed nearest neighbour for regression)",
    family="condensing", reference="Kordos and Blachnik 2012",
    purpose="shrink a regression table: keep a row only when the kept rows predict its target "
            "worse than alpha times its neighbours' standard deviation",
    func=reg_cnn,
    params=(Param("k", int, 9, "kept rows that predict a row, and neighbours whose spread sets "
                  "its threshold", low=1),
            Param("alpha", float, 0.5, "the threshold in standard deviations of the row's "
                  "neighbours' targets", check=lambda v: v > 0, check_says=_ALPHA_SAYS),
            Param("order", str, "shuffled", "order in which rows are presented: seeded shuffle "
                  "or input order", choices=("shuffled", "input")),
            _UNIT),
    reasons={"predicted-well": "the kept rows predict its target within the threshold "
                               "(kept_as is its nearest kept row)"},
)

REG_HARDNESS = MethodInfo(
    key="hardness", name="instance hardness for regression (scaled neighbour residual)",
    family="scores", reference="common practice",
    purpose="score each row by how far its target lies from its k nearest neighbours' mean, in "
            "standard deviations of the target; optionally remove rows at or above a threshold",
    func=regression_hardness, catches=("outlier",), judged_by_lists=True,
    params=(Param("k", int, 5, "neighbours whose mean target the row is compared with", low=1),
            Param("threshold", float, None, "remove rows whose score is at least this (none: "
                  "score only)", check=lambda v: v > 0, check_says=_ALPHA_SAYS),
            _UNIT),
    reasons={"hard": "its target is at least threshold standard deviations of the target from "
                     "its neighbours' mean"},
)
