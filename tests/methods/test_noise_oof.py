"""Out-of-fold probabilities of the label-noise committee against scikit-learn.

Oracle: scikit-learn's ``cross_val_predict(..., method="predict_proba")`` with
the same folds (``StratifiedKFold(shuffle=True, random_state=seed)``), on
scikit-learn's bundled wine and breast cancer tables (open data shipped in a
package), range-normalised with scikit-learn's MinMaxScaler. The tables have
no two rows at the same distance from a third where it matters, so k-NN
neighbour ties cannot differ between the two implementations.
"""

from __future__ import annotations

import numpy as np
import open_data
import pytest
from sklearn.ensemble import RandomForestClassifier
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold, cross_val_predict
from sklearn.naive_bayes import GaussianNB
from sklearn.neighbors import KNeighborsClassifier
from sklearn.preprocessing import MinMaxScaler

from curate.methods._members import parse_models
from curate.methods._oof import doubt, make_folds, out_of_fold
from curate.space import Space


def table(name: str) -> tuple[np.ndarray, np.ndarray]:
    X, y = open_data.load(name)
    return MinMaxScaler().fit_transform(X), np.asarray(y)


def folds_of(y: np.ndarray, folds: int, seed: int) -> tuple[np.ndarray, StratifiedKFold]:
    names = np.unique(y)
    return make_folds(np.searchsorted(names, y), folds, seed, names, "committee"), \
        StratifiedKFold(n_splits=folds, shuffle=True, random_state=seed)


def test_folds_are_scikit_learns_stratified_folds() -> None:
    """Fold numbers equal the test parts of StratifiedKFold, in its order."""
    X, y = table("wine")
    fold, split = folds_of(y, 5, 11)
    for number, (_, test) in enumerate(split.split(X, y)):
        assert np.array_equal(np.flatnonzero(fold == number), np.sort(test))


@pytest.mark.parametrize(("entry", "reference"), [
    ({"model": "knn", "params": {"k": 7}}, KNeighborsClassifier(n_neighbors=7)),
    ("linear", LogisticRegression(C=100.0, max_iter=1000, random_state=3)),
    ({"model": "trees", "params": {"n_estimators": 20}},
     RandomForestClassifier(n_estimators=20, min_samples_leaf=1, random_state=3)),
    ("sklearn.naive_bayes.GaussianNB", GaussianNB()),
])
@pytest.mark.parametrize("name", ["wine", "breast_cancer"])
def test_out_of_fold_probabilities_equal_cross_val_predict(entry, reference, name) -> None:
    """Each member's probabilities equal cross_val_predict's with the same folds."""
    X, y = table(name)
    fold, split = folds_of(y, 5, 3)
    ours = out_of_fold(Space.from_matrix(X), y, len(np.unique(y)), parse_models([entry]), fold,
                       seed=3).proba[0]
    theirs = cross_val_predict(reference, X, y, cv=split, method="predict_proba")
    np.testing.assert_allclose(ours, theirs, rtol=0, atol=1e-12)


def test_knn_neighbours_lie_in_other_folds_and_match_scikit_learn() -> None:
    """The k-NN member's recorded neighbours are scikit-learn's among the other folds."""
    X, y = table("wine")
    fold, _ = folds_of(y, 4, 0)
    oof = out_of_fold(Space.from_matrix(X), y, 3, parse_models([{"model": "knn",
                                                                 "params": {"k": 5}}]),
                      fold, seed=0)
    assert oof.neighbours is not None
    for f in range(4):
        test, train = np.flatnonzero(fold == f), np.flatnonzero(fold != f)
        model = KNeighborsClassifier(n_neighbors=5).fit(X[train], y[train])
        _, theirs = model.kneighbors(X[test])
        assert np.array_equal(oof.neighbours[test], train[theirs])


def test_doubt_is_one_minus_the_mean_probability_of_the_own_label() -> None:
    """Definition in the issue: doubt = 1 - committee-mean out-of-fold P(own label)."""
    X, y = table("wine")
    fold, split = folds_of(y, 5, 1)
    oof = out_of_fold(Space.from_matrix(X), y, 3, parse_models(["knn", "linear"]), fold,
                      seed=1)
    knn = cross_val_predict(KNeighborsClassifier(n_neighbors=5), X, y, cv=split,
                            method="predict_proba")
    lr = cross_val_predict(LogisticRegression(C=100.0, max_iter=1000, random_state=1), X, y,
                           cv=split, method="predict_proba")
    expected = 1 - (knn + lr)[np.arange(len(y)), y] / 2
    np.testing.assert_allclose(doubt(oof.mean(), y), expected, atol=1e-12)
