"""CNN, FCNN and RNN against their published procedures, written out plainly here.

Each reference follows the paper's pseudo-code step by step and asks
scikit-learn (KNeighborsClassifier / NearestNeighbors, refitted from scratch
whenever the store changes) for every nearest neighbour; curate's incremental
bookkeeping must keep exactly the same rows. Wine has no two equally near
rows, so scikit-learn's choice among ties never matters.
"""

from __future__ import annotations

import numpy as np
from condensing_fixtures import scaled
from sklearn.neighbors import KNeighborsClassifier, NearestNeighbors

from curate.methods.condensing import cnn, fcnn, rnn
from curate.space import Space


def hart_reference(X: np.ndarray, y: np.ndarray, order: np.ndarray) -> list[int]:
    """Hart 1968: STORE starts with the first row presented; a row the 1-NN rule on STORE
    misclassifies joins STORE; passes repeat until one adds nothing. Returns STORE in the
    order rows joined. (1-NN is refitted after each addition and asked about the rows
    still to come in the pass, which is the same as asking row by row.)"""
    store = [int(order[0])]
    changed = True
    while changed:
        changed = False
        at = 0
        while at < len(order):
            rest = [int(i) for i in order[at:] if i not in store]
            if not rest:
                break
            knn = KNeighborsClassifier(n_neighbors=1).fit(X[store], y[store])
            wrong = np.flatnonzero(knn.predict(X[rest]) != y[rest])
            if len(wrong) == 0:
                break
            store.append(rest[wrong[0]])
            changed = True
            at = int(np.flatnonzero(order == rest[wrong[0]])[0]) + 1
    return store


def gates_reference(X: np.ndarray, y: np.ndarray, store: list[int]) -> list[int]:
    """Gates 1972: remove each member in turn if 1-NN on the rest still labels every input
    row correctly."""
    kept = list(store)
    for s in store:
        trial = [m for m in kept if m != s]
        knn = KNeighborsClassifier(n_neighbors=1).fit(X[trial], y[trial])
        if (knn.predict(X) == y).all():
            kept = trial
    return sorted(kept)


def fcnn_reference(X: np.ndarray, y: np.ndarray) -> list[int]:
    """Angiulli 2007, FCNN1: start from each class's row nearest its centroid; while the
    store changes, add for every store member the nearest of the rows whose nearest member
    it is and whose label differs from its own."""
    store: list[int] = []
    new = []
    for c in np.unique(y):
        rows = np.flatnonzero(y == c)
        centre = X[rows].mean(axis=0, keepdims=True)
        new.append(int(rows[np.argmin(np.linalg.norm(X[rows] - centre, axis=1))]))
    while new:
        store += new
        near = NearestNeighbors(n_neighbors=1).fit(X[store]).kneighbors(X)[1][:, 0]
        owner = np.asarray(store)[near]
        new = []
        for p in store:
            enemies = [q for q in range(len(y)) if owner[q] == p and y[q] != y[p]
                       and q not in store]
            if enemies:
                new.append(min(enemies, key=lambda q: np.linalg.norm(X[q] - X[p])))
    return sorted(store)


def test_cnn_keeps_the_rows_harts_procedure_keeps() -> None:
    """Hart 1968, presentation order as documented: numpy default_rng(seed).permutation."""
    X, y = scaled("wine", rows=120)
    s, everyone = Space.from_matrix(X), np.ones(len(y), bool)
    assert cnn(s, y, removable=everyone, order="input").kept.tolist() == \
        sorted(hart_reference(X, y, np.arange(len(y))))
    order = np.random.default_rng(4).permutation(len(y))
    assert cnn(s, y, removable=everyone, seed=4).kept.tolist() == \
        sorted(hart_reference(X, y, order))


def test_rnn_keeps_the_rows_gates_procedure_keeps() -> None:
    """Gates 1972, members tried in the order they joined Hart's store."""
    X, y = scaled("wine", rows=120)
    order = np.random.default_rng(9).permutation(len(y))
    expected = gates_reference(X, y, hart_reference(X, y, order))
    got = rnn(Space.from_matrix(X), y, removable=np.ones(len(y), bool), seed=9)
    assert got.kept.tolist() == expected


def test_fcnn_keeps_the_rows_angiullis_procedure_keeps() -> None:
    """Angiulli 2007, FCNN1, with nearest neighbours from scikit-learn."""
    X, y = scaled("wine")
    got = fcnn(Space.from_matrix(X), y, removable=np.ones(len(y), bool))
    assert got.kept.tolist() == fcnn_reference(X, y)
