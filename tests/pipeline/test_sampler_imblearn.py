"""The sampler against imbalanced-learn and scikit-learn.

Outside references: imbalanced-learn's EditedNearestNeighbours (the same
procedure as curate's ENN with ``vote="unanimous"`` = its ``kind_sel="all"``;
the majority rule differs on own-label ties, see tests/test_editing_enn.py),
scikit-learn's MinMaxScaler (the range scaling curate applies by default),
KNeighborsClassifier, StratifiedKFold, cross_val_score and cross_validate,
and imbalanced-learn's Pipeline, which applies samplers during fit only.
Data: scikit-learn's bundled wine set (no download).
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np
import open_data
import pytest
from imblearn.pipeline import Pipeline
from imblearn.under_sampling import EditedNearestNeighbours
from sklearn.model_selection import StratifiedKFold, cross_val_score, cross_validate
from sklearn.neighbors import KNeighborsClassifier
from sklearn.preprocessing import MinMaxScaler
from threadpoolctl import threadpool_limits

from curate import Sampler


@pytest.fixture(autouse=True)
def one_thread() -> Iterator[None]:
    """Reference libraries on one thread: the test machine is shared (2 cores)."""
    with threadpool_limits(1):
        yield


def noisy_wine(share: float = 0.1, seed: int = 3) -> tuple[np.ndarray, np.ndarray]:
    """Raw wine features with a seeded share of labels moved to another class."""
    X, y = open_data.load("wine")
    rng = np.random.default_rng(seed)
    y = y.copy()
    for i in rng.choice(len(y), int(round(share * len(y))), replace=False):
        y[i] = (y[i] + rng.integers(1, 3)) % 3
    return X, y


@pytest.mark.parametrize("k", [3, 5])
@pytest.mark.parametrize("share", [0.0, 0.1])
def test_enn_sampler_keeps_what_imbalanced_learn_keeps(k: int, share: float) -> None:
    """Same kept rows as EditedNearestNeighbours(kind_sel="all") on range-scaled wine.

    curate scales raw features itself (scale="range"); the reference gets
    MinMaxScaler's output.
    """
    X, y = noisy_wine(share)
    ours = Sampler(method="enn", k=k, vote="unanimous")
    X_kept, y_kept = ours.fit_resample(X, y)
    theirs = EditedNearestNeighbours(sampling_strategy="all", n_neighbors=k, kind_sel="all")
    theirs.fit_resample(MinMaxScaler().fit_transform(X), y)
    assert ours.sample_indices_.tolist() == sorted(theirs.sample_indices_.tolist())
    np.testing.assert_array_equal(X_kept, X[theirs.sample_indices_])
    np.testing.assert_array_equal(y_kept, y[theirs.sample_indices_])
    assert sorted(ours.audit_["row_id"].to_list()) == sorted(
        set(range(len(y))) - set(theirs.sample_indices_.tolist()))


class RecordingKNN(KNeighborsClassifier):
    """A k-NN classifier that remembers the rows it was fitted on."""

    def fit(self, X: np.ndarray, y: np.ndarray) -> RecordingKNN:
        self.seen_ = np.asarray(X).copy()
        return super().fit(X, y)


def test_pipeline_curates_training_folds_only() -> None:
    """In an imbalanced-learn Pipeline, cross-validation curates the training folds only.

    Per fold, the model is fitted on exactly the rows imbalanced-learn's ENN
    keeps from the training part, range-scaled on its own (so never on a test
    row), and its score
    equals a k-NN fitted by hand on that ENN output and scored on the
    untouched test fold. cross_val_score gives the same scores.
    """
    X, y = noisy_wine(0.1, seed=5)
    X = MinMaxScaler().fit_transform(X)
    folds = StratifiedKFold(n_splits=5, shuffle=True, random_state=0)
    pipe = Pipeline([("curate", Sampler(method="enn", k=3, vote="unanimous")),
                     ("model", RecordingKNN(n_neighbors=1))])
    scores = cross_val_score(pipe, X, y, cv=folds)
    out = cross_validate(pipe, X, y, cv=folds, return_estimator=True, return_indices=True)
    np.testing.assert_array_equal(scores, out["test_score"])
    splits = zip(out["indices"]["train"], out["indices"]["test"], out["estimator"], strict=True)
    for (train, test, fitted), score in zip(splits, scores, strict=True):
        # The sampler range-scales what it is given: the training part, on its own.
        enn = EditedNearestNeighbours(sampling_strategy="all", n_neighbors=3, kind_sel="all")
        enn.fit_resample(MinMaxScaler().fit_transform(X[train]), y[train])
        X_ref, y_ref = X[train][enn.sample_indices_], y[train][enn.sample_indices_]
        seen = fitted.named_steps["model"].seen_
        assert seen.shape[0] == X_ref.shape[0] < len(train)
        seen_rows = {tuple(r) for r in seen}
        assert seen_rows == {tuple(r) for r in X_ref}
        assert seen_rows.isdisjoint({tuple(r) for r in X[test]})
        by_hand = KNeighborsClassifier(n_neighbors=1).fit(X_ref, y_ref).score(X[test], y[test])
        assert score == pytest.approx(by_hand)


def test_grid_search_reaches_method_parameters() -> None:
    """set_params routes a method parameter into ``params``, as GridSearchCV calls it."""
    pipe = Pipeline([("curate", Sampler(method="enn")), ("model", KNeighborsClassifier())])
    pipe.set_params(curate__k=7, model__n_neighbors=1)
    assert pipe.named_steps["curate"].get_params()["params"] == {"k": 7}
