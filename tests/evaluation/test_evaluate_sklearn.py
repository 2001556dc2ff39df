"""Fold scores of `evaluate` against scikit-learn's own cross-validation on the same folds.

Outside reference: scikit-learn's ``cross_val_score`` with ``StratifiedKFold``
(shuffled, same seed), a ``MinMaxScaler`` fitted inside each fold (curate's
default range scaling, fitted on training rows only) and ``KNeighborsClassifier``
/ ``DummyClassifier`` / ``DecisionTreeClassifier``; data: scikit-learn's bundled
wine set (Forina et al., UCI), written to CSV.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from evaluate_fixtures import spec_for, wine_csv
from sklearn.dummy import DummyClassifier
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import MinMaxScaler
from sklearn.tree import DecisionTreeClassifier

from curate.evaluation.crossval import evaluate

FOLDS, SEED = 5, 3


def folds() -> StratifiedKFold:
    return StratifiedKFold(n_splits=FOLDS, shuffle=True, random_state=SEED)


def record(result: dict, model: str, k: int | None, curated: bool) -> dict:
    (found,) = [r for r in result["results"]
                if r["model"] == model and r["k"] == k and r["curated"] == curated]
    return found


@pytest.fixture(scope="module")
def wine(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, np.ndarray, np.ndarray]:
    return wine_csv(tmp_path_factory.mktemp("wine"))


@pytest.fixture(scope="module")
def result(wine: tuple[Path, np.ndarray, np.ndarray]) -> dict:
    path, _, _ = wine
    return evaluate(spec_for(path, "target"), folds=FOLDS, ks=[1, 5, 15], seed=SEED,
                    model="sklearn.tree.DecisionTreeClassifier", model_params={"max_depth": 3})


@pytest.mark.parametrize("k", [1, 5, 15])
def test_uncurated_knn_fold_scores_equal_cross_val_score(result: dict, wine, k: int) -> None:
    _, x, y = wine
    expected = cross_val_score(make_pipeline(MinMaxScaler(), KNeighborsClassifier(n_neighbors=k)),
                               x, y, cv=folds())
    got = record(result, "knn", k, curated=False)
    np.testing.assert_allclose(got["fold_accuracy"], expected, rtol=0, atol=1e-12)
    assert got["accuracy"] == pytest.approx(expected.mean(), abs=1e-12)


def test_any_named_classifier_is_scored_on_the_same_folds(result: dict, wine) -> None:
    _, x, y = wine
    tree = DecisionTreeClassifier(max_depth=3, random_state=SEED)
    expected = cross_val_score(make_pipeline(MinMaxScaler(), tree), x, y, cv=folds())
    got = record(result, "sklearn.tree.DecisionTreeClassifier", None, curated=False)
    np.testing.assert_allclose(got["fold_accuracy"], expected, rtol=0, atol=1e-12)


def test_a_stage_that_removes_nothing_changes_nothing(result: dict) -> None:
    # Wine has no repeated rows, so exact-duplicates keeps all: curated scores are the
    # uncurated ones and the paired test sees zero differences (p = 1).
    for plain in (r for r in result["results"] if not r["curated"]):
        cured = record(result, plain["model"], plain["k"], curated=True)
        assert cured["fold_accuracy"] == plain["fold_accuracy"]
        assert cured["kept_share"] == 1.0 and cured["p_value"] == 1.0


def test_k_equal_to_training_size_gives_the_majority_baseline(wine) -> None:
    """With k equal to the training-set size and uniform votes, kNN predicts the training
    part's majority class (common practice, no source); scikit-learn's DummyClassifier
    (most_frequent) on the same folds is the reference."""
    path, x, y = wine
    n_train = max(len(train) for train, _ in folds().split(x, y))
    out = evaluate(spec_for(path, "target"), folds=FOLDS, ks=[n_train], seed=SEED)
    dummy = cross_val_score(DummyClassifier(strategy="most_frequent"), x, y, cv=folds())
    got = record(out, "knn", n_train, curated=False)
    np.testing.assert_allclose(got["fold_accuracy"], dummy, rtol=0, atol=1e-12)
    assert out["baseline_accuracy"] == pytest.approx(dummy.mean(), abs=1e-12)
