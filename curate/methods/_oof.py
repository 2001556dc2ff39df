"""Out-of-fold class probabilities of a committee, and the doubt score built from them.

Rows are split into stratified, seeded folds (scikit-learn's ``StratifiedKFold``
with ``shuffle=True``). Each member is fitted on the other folds only and gives
the probability of every class for the rows of the held-out fold, exactly as
scikit-learn's ``cross_val_predict(..., method="predict_proba")`` with the same
folds. A row's **doubt** is one minus the committee's mean out-of-fold
probability of its own label.

The k-NN member votes in curate's space. Its out-of-fold neighbours come from
one self-search of the whole table for a few more neighbours than ``k``: the
first ``k`` of them outside the row's fold are exactly its ``k`` nearest rows
among the other folds (neighbour lists are ordered by distance, then position,
whatever the query). Rows with fewer than ``k`` such rows in the list are
searched again among the other folds alone. One self-search lets the engine
compute each pair of rows once (see DEVELOPERS.md), where one search per fold
would compute most pairs twice.

Leakage note: the k-NN member measures distance in the space the stage was
given. Under HVDM or learned weights that space was fitted on the stage's
labels, held-out rows included; the other members learn from the training
folds alone.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from curate.errors import UsageError
from curate.methods._members import Member, estimator
from curate.neighbours.search import kneighbors
from curate.space.points import Space

__all__ = ["OutOfFold", "coordinates", "doubt", "knn_out_of_fold", "make_folds", "member_proba",
           "out_of_fold", "sample_rows"]


@dataclass
class OutOfFold:
    """What a committee said about each row, fitted without it.

    ``proba[m, i, c]`` is member ``m``'s out-of-fold probability that row ``i``
    is of class ``c``; ``neighbours``/``distances`` are the k-NN member's
    neighbours of each row among the other folds (None without that member).
    """

    proba: np.ndarray
    fold: np.ndarray
    neighbours: np.ndarray | None = None
    distances: np.ndarray | None = None

    def mean(self) -> np.ndarray:
        """The committee's mean probability per row and class."""
        return np.asarray(self.proba.mean(axis=0))

    def predicted(self) -> np.ndarray:
        """Each member's predicted class per row, ``(members, n)`` (ties: lower class)."""
        return np.asarray(self.proba.argmax(axis=2))


def doubt(proba: np.ndarray, codes: np.ndarray) -> np.ndarray:
    """One minus each row's probability of its own label.

    Examples
    --------
    >>> doubt(np.array([[0.9, 0.1], [0.25, 0.75]]), np.array([0, 0])).tolist()
    [0.09999999999999998, 0.75]
    """
    return np.asarray(1.0 - proba[np.arange(len(codes)), codes])


def make_folds(codes: np.ndarray, folds: int, seed: int, names: np.ndarray,
               method: str) -> np.ndarray:
    """Fold number of each row: stratified by class, shuffled with ``seed``.

    Every class needs at least ``folds`` rows, so that each fold holds one of
    each; otherwise a UsageError names the class and the key ``folds``.

    Examples
    --------
    >>> f = make_folds(np.array([0, 0, 1, 1]), 2, 0, np.array(["a", "b"]), "committee")
    >>> sorted(f.tolist())
    [0, 0, 1, 1]
    >>> make_folds(np.array([0, 0, 1]), 2, 0, np.array(["a", "b"]), "committee")
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: committee: folds = 2, but class 'b' has only 1 row in this stage; \
each fold needs a row of every class
      hint: a class of one row cannot be cross-validated: fix or drop that row first
    """
    if folds < 2:
        raise UsageError(f"{method}: folds = {folds}, but cross-validation needs at least 2",
                         hint="set folds to 2 or more (5 is usual)")
    sizes = np.bincount(codes, minlength=len(names))
    small = np.flatnonzero(sizes < folds)
    if len(small):
        c = int(small[np.argmin(sizes[small])])
        rows = "row" if sizes[c] == 1 else "rows"
        hint = (f"lower folds to {sizes[c]}" if sizes[c] >= 2 else
                "a class of one row cannot be cross-validated: fix or drop that row first")
        raise UsageError(f"{method}: folds = {folds}, but class {str(names[c])!r} has only "
                         f"{sizes[c]} {rows} in this stage; each fold needs a row of every "
                         "class", hint=hint)
    from sklearn.model_selection import StratifiedKFold

    fold = np.empty(len(codes), dtype=np.int64)
    split = StratifiedKFold(n_splits=folds, shuffle=True, random_state=seed)
    for number, (_, test) in enumerate(split.split(np.zeros((len(codes), 1)), codes)):
        fold[test] = number
    return fold


def coordinates(space: Space) -> np.ndarray:
    """The matrix the non-k-NN members learn from: the space's coordinates.

    Under ``missing = "far"`` a missing value sits at 0 in the matrix; one
    extra 0/1 column per attribute with gaps tells the models where.
    """
    if space.gaps is None:
        return space.matrix
    flags = space.gaps[:, space.gaps.any(axis=0)].astype(np.float64)
    return np.hstack([space.matrix, flags])


def _spread(proba: np.ndarray, classes: np.ndarray, n_classes: int) -> np.ndarray:
    """Columns of a model's ``predict_proba`` placed at their class codes."""
    out = np.zeros((proba.shape[0], n_classes))
    out[:, np.asarray(classes, dtype=np.int64)] = proba
    return out


def _knn_proba(space: Space, codes: np.ndarray, n_classes: int, k: int, train: np.ndarray,
               queries: np.ndarray) -> np.ndarray:
    if len(train) < k:
        raise UsageError(f"models: knn with k = {k} needs {k} training rows, but a part has "
                         f"{len(train)}", hint="lower the knn member's k, or fold count")
    _, nbr = kneighbors(space, k, queries=queries, reference=train, exclude_self=False)
    return _votes(codes, nbr, n_classes)


def _votes(codes: np.ndarray, nbr: np.ndarray, n_classes: int) -> np.ndarray:
    """Share of each class among each row's neighbours (scikit-learn's uniform weights)."""
    counts = np.zeros((nbr.shape[0], n_classes))
    rows = np.arange(nbr.shape[0])
    for j in range(nbr.shape[1]):
        np.add.at(counts, (rows, codes[nbr[:, j]]), 1.0)
    return counts / nbr.shape[1]


def member_proba(member: Member, space: Space, X: np.ndarray, codes: np.ndarray,
                 n_classes: int, train: np.ndarray, queries: np.ndarray, seed: int,
                 where: str = "models") -> np.ndarray:
    """Fit ``member`` on the ``train`` positions and return class probabilities of ``queries``.

    A query that is also a training row is answered by a model that saw it
    (the k-NN member then counts the row itself among its neighbours, as
    scikit-learn's ``KNeighborsClassifier`` would).
    """
    if member.is_knn:
        return _knn_proba(space, codes, n_classes, int(member.params["k"]), train, queries)
    model = estimator(member, seed=seed, where=where)
    model.fit(X[train], codes[train])
    return _spread(model.predict_proba(X[queries]), model.classes_, n_classes)


def _wide(k: int, folds: int, n: int) -> int:
    """Neighbours to ask for so that ``k`` lie outside the row's fold for nearly every row.

    About one in ``folds`` of them shares the row's fold; three standard
    deviations of slack leave few rows to search again.
    """
    return min(n - 1, math.ceil(k * folds / (folds - 1) + 3 * math.sqrt(k)) + 1)


def _knn_out_of_fold(space: Space, codes: np.ndarray, n_classes: int, k: int,
                     fold: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """k-NN votes of each row's k nearest rows among the other folds: (proba, dist, nbr)."""
    out_d, out_i = knn_out_of_fold(space, k, fold)
    return _votes(codes, out_i, n_classes), out_d, out_i


def knn_out_of_fold(space: Space, k: int, fold: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Each row's k nearest rows among the other folds, and their distances: (dist, nbr).

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [2.0], [3.0]])
    >>> knn_out_of_fold(s, 1, np.array([0, 1, 0, 1]))[1][:, 0].tolist()
    [1, 0, 1, 2]
    """
    n, folds = len(fold), int(fold.max()) + 1
    smallest = n - int(np.bincount(fold).max())
    if smallest < k:
        raise UsageError(f"models: knn with k = {k} needs {k} rows outside each fold, but "
                         f"one fold leaves {smallest}",
                         hint="lower the knn member's k, or run the stage on more rows")
    dist, nbr = kneighbors(space, _wide(k, folds, n))
    other = fold[nbr] != fold[:, None]
    first = np.argsort(~other, axis=1, kind="stable")[:, :k]
    out_d = np.take_along_axis(dist, first, axis=1)
    out_i = np.take_along_axis(nbr, first, axis=1)
    short = other.sum(axis=1) < k
    for f in range(folds):
        again = np.flatnonzero(short & (fold == f))
        if len(again):
            out_d[again], out_i[again] = kneighbors(space, k, queries=again,
                                                    reference=np.flatnonzero(fold != f),
                                                    exclude_self=False)
    return out_d, out_i


def sample_rows(train: np.ndarray, codes: np.ndarray, cap: int, seed: int,
                part: int) -> np.ndarray:
    """At most about ``cap`` of the ``train`` positions: a seeded sample, stratified by class.

    Each class keeps its share of the sample (at least one row); order is kept.

    Examples
    --------
    >>> codes = np.array([0] * 90 + [1] * 10)
    >>> picked = sample_rows(np.arange(100), codes, 20, seed=0, part=0)
    >>> len(picked), int(np.sum(codes[picked] == 1))
    (20, 2)
    >>> sample_rows(np.arange(5), codes, 20, seed=0, part=0).tolist()
    [0, 1, 2, 3, 4]
    """
    if cap <= 0 or len(train) <= cap:
        return train
    rng = np.random.default_rng([seed, part])
    picked = []
    for c in np.unique(codes[train]):
        mine = train[codes[train] == c]
        take = max(1, int(round(cap * len(mine) / len(train))))
        picked.append(rng.choice(mine, size=min(take, len(mine)), replace=False))
    return np.sort(np.concatenate(picked))


def out_of_fold(space: Space, codes: np.ndarray, n_classes: int, members: Sequence[Member],
                fold: np.ndarray, seed: int, fit_rows: int = 0) -> OutOfFold:
    """Every member's out-of-fold class probabilities for every row.

    With ``fit_rows`` > 0, members other than the k-NN vote learn from a
    seeded, stratified sample of at most about that many rows of the other
    folds (:func:`sample_rows`); the k-NN vote always sees every row.

    Examples
    --------
    >>> from curate.methods._members import parse_models
    >>> s = Space.from_matrix([[0.0], [0.1], [0.2], [5.0], [5.1], [5.2]])
    >>> y = np.array([0, 0, 0, 1, 1, 1])
    >>> oof = out_of_fold(s, y, 2, parse_models([{"model": "knn", "params": {"k": 1}}]),
    ...                   np.array([0, 1, 2, 0, 1, 2]), seed=0)
    >>> oof.proba[0, :, 1].tolist(), oof.neighbours[:, 0].tolist()
    ([0.0, 0.0, 0.0, 1.0, 1.0, 1.0], [1, 0, 1, 4, 3, 4])
    """
    X = coordinates(space)
    proba = np.zeros((len(members), len(codes), n_classes))
    nbr = dist = None
    everyone = np.arange(len(codes))
    for m, member in enumerate(members):
        if member.is_knn:
            proba[m], dist, nbr = _knn_out_of_fold(space, codes, n_classes,
                                                   int(member.params["k"]), fold)
            continue
        for f in range(int(fold.max()) + 1):
            test = everyone[fold == f]
            train = sample_rows(everyone[fold != f], codes, fit_rows, seed, f)
            proba[m, test] = member_proba(member, space, X, codes, n_classes, train, test, seed,
                                          f"models[{m + 1}]")
    return OutOfFold(proba, fold, nbr, dist)
