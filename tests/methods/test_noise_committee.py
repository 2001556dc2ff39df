"""The committee filter (Brodley and Friedl 1999) against scikit-learn and its definition.

* With one model, a majority vote and ``min_doubt = 0`` (the filter as
  published), the filter is the plain out-of-fold
  misclassification filter: the rows where scikit-learn's
  ``cross_val_predict`` (same model, same ``StratifiedKFold`` folds) predicts
  another label.
* Brodley and Friedl (1999): every row the consensus filter removes, the
  majority filter removes too (all models disagreeing is a majority).
* The input's labels are never changed; ``relabel`` and ``report`` keep every
  row and flag the same rows that ``remove`` removes.

Data: scikit-learn's bundled wine, breast cancer and iris tables (open data
shipped in a package), range-normalised, with 10% of labels flipped (seeded).
"""

from __future__ import annotations

import numpy as np
import open_data
import pytest
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold, cross_val_predict
from sklearn.neighbors import KNeighborsClassifier
from sklearn.preprocessing import MinMaxScaler
from sklearn.tree import DecisionTreeClassifier

from curate.methods.noise import committee
from curate.space import Space


def noisy(name: str, seed: int = 0, rate: float = 0.1) -> tuple[np.ndarray, np.ndarray]:
    X, y = open_data.load(name)
    y = np.asarray(y).copy()
    rng = np.random.default_rng(seed)
    chosen = rng.choice(len(y), int(rate * len(y)), replace=False)
    k = len(np.unique(y))
    y[chosen] = (y[chosen] + rng.integers(1, k, len(chosen))) % k
    return MinMaxScaler().fit_transform(X), y


def everyone(n: int) -> np.ndarray:
    return np.ones(n, dtype=bool)


@pytest.mark.parametrize(("entry", "reference"), [
    ("linear", LogisticRegression(C=100.0, max_iter=1000, random_state=4)),
    ({"model": "knn", "params": {"k": 5}}, KNeighborsClassifier(n_neighbors=5)),
    ("tree", DecisionTreeClassifier(criterion="entropy", min_samples_leaf=2, random_state=4)),
])
@pytest.mark.parametrize("name", ["wine", "breast_cancer"])
def test_one_model_majority_is_the_misclassified_out_of_fold_filter(entry, reference,
                                                                     name) -> None:
    X, y = noisy(name, seed=2)
    split = StratifiedKFold(n_splits=5, shuffle=True, random_state=4)
    predicted = cross_val_predict(reference, X, y, cv=split)
    sel = committee(Space.from_matrix(X), y, removable=everyone(len(y)), seed=4,
                    models=[entry], folds=5, vote="majority", min_doubt=0.0)
    assert sel.removed.tolist() == np.flatnonzero(predicted != y).tolist()
    assert sel.suggested[sel.removed].tolist() == predicted[predicted != y].tolist()


@pytest.mark.parametrize("name", ["wine", "breast_cancer", "iris"])
@pytest.mark.parametrize("seed", [0, 1])
def test_consensus_removes_a_subset_of_majority(name, seed) -> None:
    """Brodley and Friedl (1999): consensus filter's removals lie within the majority's."""
    X, y = noisy(name, seed=seed)
    space = Space.from_matrix(X)
    models = ["knn", {"model": "trees", "params": {"n_estimators": 25}}, "linear"]
    majority = committee(space, y, removable=everyone(len(y)), seed=seed, models=models,
                         vote="majority", min_doubt=0.0)
    consensus = committee(space, y, removable=everyone(len(y)), seed=seed, models=models,
                          vote="consensus", min_doubt=0.0)
    assert set(consensus.removed.tolist()) <= set(majority.removed.tolist())
    assert len(majority.removed) > 0


def test_min_doubt_only_narrows_the_vote() -> None:
    """A doubt floor keeps the flagged rows whose doubt reaches it, and only those."""
    X, y = noisy("wine", seed=4)
    space = Space.from_matrix(X)
    plain = committee(space, y, removable=everyone(len(y)), models=["knn", "linear"],
                      min_doubt=0.0)
    floor = committee(space, y, removable=everyone(len(y)), models=["knn", "linear"],
                      min_doubt=0.8)
    doubt = plain.scores["doubt"]
    assert floor.removed.tolist() == [i for i in plain.removed.tolist() if doubt[i] >= 0.8]


def test_relabel_and_report_keep_every_row_and_never_touch_the_labels() -> None:
    X, y = noisy("wine", seed=3)
    before = y.copy()
    space = Space.from_matrix(X)
    models = ["knn", "linear"]
    removed = committee(space, y, removable=everyone(len(y)), models=models)
    for action in ("relabel", "report"):
        sel = committee(space, y, removable=everyone(len(y)), models=models, action=action)
        assert len(sel.removed) == 0 and len(sel.kept) == len(y)
        assert sel.flagged is not None
        assert sel.flagged.removed.tolist() == removed.removed.tolist()
        assert sel.flagged.detail == removed.detail
        has = np.flatnonzero([s is not None for s in sel.suggested])
        assert has.tolist() == removed.removed.tolist()
        assert all(sel.suggested[i] != y[i] for i in has)
    assert np.array_equal(y, before)
    assert removed.flagged is None


def test_rows_outside_removable_are_scored_but_never_flagged() -> None:
    X, y = noisy("wine", seed=5)
    removable = y != 0
    sel = committee(Space.from_matrix(X), y, removable=removable, models=["knn", "linear"])
    assert np.all(removable[sel.removed])
    assert sel.scores["doubt"].shape == (len(y),)
    assert np.all((sel.scores["doubt"] >= 0) & (sel.scores["doubt"] <= 1))


def test_audit_sentence_names_the_probability_and_the_vote() -> None:
    """The plain sentence the issue asks for; the vote counts are scikit-learn's predictions."""
    X, y = noisy("iris", seed=1)
    split = StratifiedKFold(n_splits=5, shuffle=True, random_state=0)
    predicted = cross_val_predict(KNeighborsClassifier(n_neighbors=5), X, y, cv=split)
    sel = committee(Space.from_matrix(X), y, removable=everyone(len(y)), models=["knn"],
                    min_doubt=0.0)
    first = int(sel.removed[0])
    assert sel.detail[0].startswith(f"out-of-fold probability of its label {str(y[first])!r} ")
    assert sel.detail[0].endswith(f"the committee votes 1 of 1 for {str(predicted[first])!r}")
    assert len(sel.neighbours[0]) == 5
