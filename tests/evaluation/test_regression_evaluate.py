"""Regression fold scores against scikit-learn's own cross-validation on the same folds.

Outside references: scikit-learn's ``cross_val_score`` on the same folds
(``StratifiedKFold`` over pandas ``qcut`` bins of the target, shuffled, same
seed) with a ``MinMaxScaler`` fitted inside each fold (curate's default range
scaling, fitted on the training rows only) and ``KNeighborsRegressor`` /
``DummyRegressor(strategy="mean")`` / ``DecisionTreeRegressor``; with k equal
to the training-set size a uniform k-NN regressor predicts the training mean
(common practice, no source). Data: scikit-learn's bundled diabetes set.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import polars as pl
import pytest
from sklearn.datasets import load_diabetes
from sklearn.dummy import DummyRegressor
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsRegressor
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import MinMaxScaler
from sklearn.tree import DecisionTreeRegressor

from curate.errors import UsageError
from curate.evaluation.regression import (
    RegressionPlan,
    cross_validate_regression,
    stage_curation,
    table_fold_spaces,
)
from curate.methods.regression import REG_ENN
from curate.settings import EngineSettings, SpaceSettings

FOLDS, SEED, TREE = 5, 3, "sklearn.tree.DecisionTreeRegressor"


@pytest.fixture(scope="module")
def diabetes() -> tuple[np.ndarray, np.ndarray]:
    return load_diabetes(return_X_y=True)


def spaces_for(x: np.ndarray):
    frame = pl.DataFrame(x, schema=[f"f{j}" for j in range(x.shape[1])], orient="row")
    kinds = {name: "float" for name in frame.columns}
    return table_fold_spaces(frame, kinds, SpaceSettings(), EngineSettings(), list(range(len(x))))


def folds(y: np.ndarray) -> list:
    bins = pd.qcut(y, 10, labels=False)
    cv = StratifiedKFold(n_splits=FOLDS, shuffle=True, random_state=SEED)
    return list(cv.split(np.zeros((len(y), 1)), bins))


def record(result: dict, model: str, k: int | None, curated: bool) -> dict:
    (found,) = [r for r in result["results"]
                if r["model"] == model and r["k"] == k and r["curated"] == curated]
    return found


@pytest.fixture(scope="module")
def result(diabetes) -> dict:
    x, y = diabetes
    plan = RegressionPlan(folds=FOLDS, ks=(1, 5, 15, 1000), model=TREE,
                          model_params={"max_depth": 3}, seed=SEED)
    return cross_validate_regression(y, spaces_for(x), stage_curation([(REG_ENN, {})], SEED),
                                     stage_names=["targets"], plan=plan)


def scores(model, x, y, scoring: str) -> np.ndarray:
    return cross_val_score(make_pipeline(MinMaxScaler(), model), x, y, cv=folds(y),
                           scoring=scoring)


@pytest.mark.parametrize("k", [1, 5, 15])
def test_uncurated_knn_fold_rmse_equals_cross_val_score(result, diabetes, k: int) -> None:
    x, y = diabetes
    got = record(result, "knn", k, curated=False)
    rmse = -scores(KNeighborsRegressor(n_neighbors=k), x, y, "neg_root_mean_squared_error")
    np.testing.assert_allclose(got["fold_rmse"], rmse, rtol=1e-12)
    mae = -scores(KNeighborsRegressor(n_neighbors=k), x, y, "neg_mean_absolute_error")
    r2 = scores(KNeighborsRegressor(n_neighbors=k), x, y, "r2")
    assert got["mae"] == pytest.approx(mae.mean(), rel=1e-12)
    assert got["r2"] == pytest.approx(r2.mean(), rel=1e-12)


def test_k_beyond_the_training_rows_gives_the_mean_baseline(result, diabetes) -> None:
    x, y = diabetes
    got = record(result, "knn", 1000, curated=False)
    dummy = -scores(DummyRegressor(strategy="mean"), x, y, "neg_root_mean_squared_error")
    np.testing.assert_allclose(got["fold_rmse"], dummy, rtol=1e-9)
    assert result["baseline_rmse"] == pytest.approx(dummy.mean(), rel=1e-9)
    assert got["k_clipped_folds"] == FOLDS


def test_any_named_regressor_is_scored_on_the_same_folds(result, diabetes) -> None:
    x, y = diabetes
    tree = DecisionTreeRegressor(max_depth=3, random_state=SEED)
    rmse = -scores(tree, x, y, "neg_root_mean_squared_error")
    np.testing.assert_allclose(record(result, TREE, None, False)["fold_rmse"], rmse, rtol=1e-12)


def test_curated_scores_train_on_the_rows_the_rule_keeps(result, diabetes) -> None:
    """The RegENN rule (k = 9, alpha = 3) applied by hand to each training fold, scaled by a
    MinMaxScaler fitted on it, then KNeighborsRegressor(5) trained on the kept rows."""
    from sklearn.neighbors import NearestNeighbors

    x, y = diabetes
    expected = []
    for train, test in folds(y):
        scaler = MinMaxScaler().fit(x[train])
        xt = scaler.transform(x[train])
        ind = NearestNeighbors(n_neighbors=10).fit(xt).kneighbors(xt)[1][:, 1:]
        around = y[train][ind]
        keep = np.abs(y[train] - around.mean(axis=1)) <= 3 * around.std(axis=1)
        model = KNeighborsRegressor(n_neighbors=5).fit(xt[keep], y[train][keep])
        expected.append(np.sqrt(np.mean((model.predict(scaler.transform(x[test])) - y[test]) ** 2)))
    got = record(result, "knn", 5, curated=True)
    np.testing.assert_allclose(got["fold_rmse"], expected, rtol=1e-12)
    plain = record(result, "knn", 5, curated=False)
    assert got["rmse_difference"] == pytest.approx(np.mean(expected) - plain["rmse"])
    assert 0.0 <= got["p_value"] <= 1.0


def test_best_k_is_the_lowest_rmse(result) -> None:
    plain = [r for r in result["results"] if r["model"] == "knn" and not r["curated"]]
    assert result["best_k"]["uncurated"] == min(plain, key=lambda r: r["rmse"])["k"]


@pytest.mark.parametrize(("plan", "words"), [
    (RegressionPlan(folds=1), "need 2 or more folds"),
    (RegressionPlan(outliers=1.5), "--inject-noise 1.5"),
    (RegressionPlan(model="sklearn.tree.DecisionTreeClassifier"), "not an importable regressor"),
])
def test_bad_requests_are_usage_errors(diabetes, plan: RegressionPlan, words: str) -> None:
    x, y = diabetes
    with pytest.raises(UsageError, match=words):
        cross_validate_regression(y, spaces_for(x), stage_curation([], 0), stage_names=[],
                                  plan=plan)
