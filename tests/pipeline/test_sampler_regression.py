"""The Sampler on a continuous target, alone and in a pipeline with a regressor.

Outside references: imbalanced-learn's ``Pipeline`` with scikit-learn's
``KNeighborsRegressor`` scored by ``cross_val_score`` on ``KFold``, against the
same folds run by hand: the RegENN rule (Kordos and Blachnik 2012) applied with
scikit-learn's ``NearestNeighbors`` on each training part range-normalised by
``MinMaxScaler``, then the regressor fitted on the rows kept. Data:
scikit-learn's bundled diabetes set.
"""

from __future__ import annotations

import numpy as np
import pytest
from imblearn.pipeline import Pipeline
from sklearn.datasets import load_diabetes
from sklearn.model_selection import KFold, cross_val_score
from sklearn.neighbors import KNeighborsRegressor, NearestNeighbors
from sklearn.preprocessing import MinMaxScaler

from curate import Sampler
from curate.errors import UsageError


def _kept_by_the_rule(x: np.ndarray, y: np.ndarray, k: int, alpha: float) -> np.ndarray:
    scaled = MinMaxScaler().fit_transform(x)
    around = y[NearestNeighbors(n_neighbors=k + 1).fit(scaled).kneighbors(scaled)[1][:, 1:]]
    return np.flatnonzero(np.abs(y - around.mean(axis=1)) <= alpha * around.std(axis=1))


def test_in_a_pipeline_with_a_regressor_it_curates_the_training_folds_only() -> None:
    x, y = load_diabetes(return_X_y=True)
    folds = KFold(n_splits=4, shuffle=True, random_state=1)
    pipe = Pipeline([("clean", Sampler(method="reg-enn", k=9, alpha=2.0)),
                     ("model", KNeighborsRegressor(n_neighbors=7))])
    got = cross_val_score(pipe, x, y, cv=folds, scoring="neg_root_mean_squared_error")
    expected = []
    for train, test in folds.split(x):
        keep = _kept_by_the_rule(x[train], y[train], 9, 2.0)
        model = KNeighborsRegressor(n_neighbors=7).fit(x[train][keep], y[train][keep])
        expected.append(-np.sqrt(np.mean((model.predict(x[test]) - y[test]) ** 2)))
    np.testing.assert_allclose(got, expected, rtol=1e-12)


def test_a_shared_key_reads_a_continuous_target_as_regression() -> None:
    x, y = load_diabetes(return_X_y=True)
    sampler = Sampler(method="hardness", k=5, threshold=1.5).fit(x, y)
    scaled = MinMaxScaler().fit_transform(x)
    around = y[NearestNeighbors(n_neighbors=6).fit(scaled).kneighbors(scaled)[1][:, 1:]]
    expected = np.abs(y - around.mean(axis=1)) / np.std(y)
    assert sampler.task_ == "regression"
    np.testing.assert_allclose(sampler.scores_["hardness"], expected, rtol=1e-12)
    np.testing.assert_array_equal(sampler.audit_["row_id"].sort().to_numpy(),
                                  np.flatnonzero(expected >= 1.5))


def test_a_classification_method_on_a_continuous_target_names_the_alternatives() -> None:
    x, y = load_diabetes(return_X_y=True)
    with pytest.raises(UsageError, match="method 'enn' compares classes") as caught:
        Sampler(method="enn", task="regression").fit(x, y)
    assert "reg-enn" in str(caught.value)


@pytest.mark.parametrize(("target", "words"), [(np.array([1.0, np.nan] * 10), "no finite"),
                                               (np.full(20, 4.0), "every one of the 20 rows")])
def test_a_bad_continuous_target_is_a_value_error(target: np.ndarray, words: str) -> None:
    # scikit-learn's convention: a problem with y is a ValueError.
    with pytest.raises(ValueError, match=words):
        Sampler(method="reg-enn", k=2).fit(np.arange(20.0).reshape(-1, 1), target)
