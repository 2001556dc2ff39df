"""Numeric targets: checks, quantile bins, stratified folds and out-of-fold residuals.

Outside references: pandas' ``qcut`` (equal-frequency bins, right-closed, the
lowest value included), numpy's standard deviation, scikit-learn's
``StratifiedKFold`` and ``cross_val_predict`` with ``KNeighborsRegressor``.
Data: scikit-learn's bundled diabetes set (Efron et al. 2004).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.datasets import load_diabetes
from sklearn.model_selection import StratifiedKFold, cross_val_predict
from sklearn.neighbors import KNeighborsRegressor

from curate.errors import InputError
from curate.methods._targets import (
    check_targets,
    out_of_fold_residuals,
    quantile_bins,
    regression_folds,
    scaled_residuals,
)


@pytest.mark.parametrize("bins", [2, 5, 10])
def test_bins_equal_pandas_qcut_on_diabetes(bins: int) -> None:
    y = load_diabetes().target
    codes, edges = quantile_bins(y, bins)
    expected, expected_edges = pd.qcut(y, bins, labels=False, retbins=True, duplicates="drop")
    np.testing.assert_array_equal(codes, expected)
    np.testing.assert_allclose(edges, expected_edges)


def test_repeated_targets_merge_bins_like_pandas() -> None:
    y = np.array([1.0] * 8 + [2.0, 3.0])
    codes, edges = quantile_bins(y, 4)
    expected, expected_edges = pd.qcut(y, 4, labels=False, retbins=True, duplicates="drop")
    np.testing.assert_array_equal(codes, expected)
    assert len(edges) == len(expected_edges)


def test_folds_are_stratified_k_fold_on_the_quantile_bins() -> None:
    y = load_diabetes().target
    ours = regression_folds(y, 5, seed=3)
    theirs = StratifiedKFold(5, shuffle=True, random_state=3).split(
        np.zeros((len(y), 1)), pd.qcut(y, 10, labels=False))
    for (train_a, test_a), (train_b, test_b) in zip(ours, theirs, strict=True):
        np.testing.assert_array_equal(test_a, test_b)
        np.testing.assert_array_equal(train_a, train_b)


def test_out_of_fold_residuals_match_cross_val_predict() -> None:
    x, y = load_diabetes(return_X_y=True)
    splits = regression_folds(y, 4, seed=1)
    predicted = cross_val_predict(KNeighborsRegressor(n_neighbors=7), x, y, cv=splits)
    got = out_of_fold_residuals(x, y, KNeighborsRegressor(n_neighbors=7), folds=4, seed=1)
    np.testing.assert_allclose(got, np.abs(y - predicted) / np.std(y))


def test_scaled_residuals_need_a_spread() -> None:
    with pytest.raises(ValueError, match="spread is zero"):
        scaled_residuals(np.ones(3), np.zeros(3))


@pytest.mark.parametrize(("values", "words"), [
    (np.array(["ok", "worn"]), "holds text"),
    (np.array([True, False]), "true/false"),
    (np.array([1.0, np.nan, 2.0]), "no finite target value"),
    (np.array([1.0, np.inf]), "no finite target value"),
    (np.array([3.0, 3.0, 3.0]), "every one of the 3 rows has the target 3"),
])
def test_bad_targets_are_input_errors_with_exit_code_3(values: np.ndarray, words: str) -> None:
    # Common practice, no source: a regression target must be numbers that vary.
    with pytest.raises(InputError, match=words) as caught:
        check_targets(values, where="table.csv, column 'hours'")
    assert caught.value.exit_code == 3 and "table.csv" in str(caught.value)


def test_missing_targets_are_named_by_row_id() -> None:
    with pytest.raises(InputError, match=r"2 rows \(first: p2, p4\)"):
        check_targets([1.0, None, 3.0, None], ids=["p1", "p2", "p3", "p4"])
