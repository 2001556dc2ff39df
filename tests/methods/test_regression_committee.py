"""The committee filter for numeric targets against scikit-learn and its own definition.

Outside references: scikit-learn's ``cross_val_predict`` with the same folds
(``PredefinedSplit``) for each committee member — ``KNeighborsRegressor``
(uniform weights), ``Ridge`` and ``RandomForestRegressor`` — on scikit-learn's
bundled diabetes table (Efron et al. 2004), range-normalised with
``MinMaxScaler``; its features are continuous, so no neighbour ties can differ
between the two implementations. The filter's rule (Brodley and Friedl 1999,
carried over from classes to numbers): consensus flags a subset of what
majority flags. Outliers: a seeded 5% of targets moved by 3 to 5 standard
deviations on the same open table.
"""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.datasets import load_diabetes
from sklearn.ensemble import RandomForestRegressor
from sklearn.linear_model import Ridge
from sklearn.model_selection import PredefinedSplit, cross_val_predict
from sklearn.neighbors import KNeighborsRegressor
from sklearn.preprocessing import MinMaxScaler

from curate.errors import UsageError
from curate.evaluation.regression_stats import inject_outliers
from curate.methods._members import parse_models
from curate.methods.reg_noise import _fold_of, out_of_fold_predictions, reg_committee
from curate.space import Space

SEED = 4


@pytest.fixture(scope="module")
def diabetes() -> tuple[np.ndarray, np.ndarray]:
    x, y = load_diabetes(return_X_y=True)
    return MinMaxScaler().fit_transform(x), y


@pytest.mark.parametrize(("entry", "reference"), [
    ({"model": "knn", "params": {"k": 7}}, KNeighborsRegressor(n_neighbors=7)),
    ("linear", Ridge(alpha=0.01)),
    ({"model": "trees", "params": {"n_estimators": 20}},
     RandomForestRegressor(n_estimators=20, random_state=SEED)),
])
def test_out_of_fold_predictions_equal_cross_val_predict(diabetes, entry, reference) -> None:
    x, y = diabetes
    fold = _fold_of(y, 5, SEED)
    members = parse_models([entry], regression=True)
    ours = out_of_fold_predictions(Space.from_matrix(x), y, members, fold, SEED)[0][0]
    theirs = cross_val_predict(reference, x, y, cv=PredefinedSplit(fold))
    np.testing.assert_allclose(ours, theirs, rtol=1e-9, atol=1e-9)


def test_doubt_is_the_residual_of_the_mean_prediction_in_target_sds(diabetes) -> None:
    x, y = diabetes
    fold = _fold_of(y, 5, SEED)
    ridge = cross_val_predict(Ridge(alpha=0.01), x, y, cv=PredefinedSplit(fold))
    knn = cross_val_predict(KNeighborsRegressor(n_neighbors=5), x, y, cv=PredefinedSplit(fold))
    sel = reg_committee(Space.from_matrix(x), y, removable=np.ones(len(y), bool), seed=SEED,
                        models=["knn", "linear"], action="report")
    expected = np.abs(y - (ridge + knn) / 2) / y.std()
    np.testing.assert_allclose(sel.scores["doubt"], expected, rtol=1e-9)


def test_consensus_flags_within_majority_and_both_follow_the_rule(diabetes) -> None:
    x, y = diabetes
    moved_y, _ = inject_outliers(y, 0.05, SEED)
    space = Space.from_matrix(x)
    every = np.ones(len(y), bool)
    cons = reg_committee(space, moved_y, removable=every, seed=SEED, vote="consensus")
    major = reg_committee(space, moved_y, removable=every, seed=SEED, vote="majority")
    assert set(cons.removed.tolist()) <= set(major.removed.tolist())
    assert len(cons.removed) > 0
    # every flagged row's doubt is above the threshold (2 target sds by default)
    assert np.all(cons.scores["doubt"][cons.removed] > 2.0)


def test_injected_outliers_are_found_with_few_false_alarms(diabetes) -> None:
    """benchmarks/regression_outliers.py measured precision 0.98, recall 0.93 (seeds 0 to 4,
    README); checked here on seeds 0 to 2 with a margin."""
    x, y = diabetes
    space = Space.from_matrix(x)
    found = flagged = moved_total = 0
    for seed in range(3):
        moved_y, moved = inject_outliers(y, 0.05, seed)
        sel = reg_committee(space, moved_y, removable=np.ones(len(y), bool), seed=seed)
        found += int(moved[sel.removed].sum())
        flagged += len(sel.removed)
        moved_total += int(moved.sum())
    assert found / flagged >= 0.9
    assert found / moved_total >= 0.7


def test_relabel_suggests_the_mean_prediction_and_removes_nothing(diabetes) -> None:
    x, y = diabetes
    moved_y, _ = inject_outliers(y, 0.05, SEED)
    sel = reg_committee(Space.from_matrix(x), moved_y, removable=np.ones(len(y), bool),
                        seed=SEED, models=["knn", "linear"], action="relabel")
    assert len(sel.removed) == 0 and sel.flagged is not None and len(sel.flagged.removed)
    fold = _fold_of(moved_y, 5, SEED)
    ridge = cross_val_predict(Ridge(alpha=0.01), x, moved_y, cv=PredefinedSplit(fold))
    knn = cross_val_predict(KNeighborsRegressor(n_neighbors=5), x, moved_y,
                            cv=PredefinedSplit(fold))
    for i in sel.flagged.removed:
        assert sel.suggested[i] == pytest.approx((ridge[i] + knn[i]) / 2)
    unflagged = np.setdiff1d(np.arange(len(y)), sel.flagged.removed)
    assert all(sel.suggested[i] is None for i in unflagged)


def test_protected_rows_are_never_flagged(diabetes) -> None:
    x, y = diabetes
    moved_y, moved = inject_outliers(y, 0.05, SEED)
    removable = ~moved
    sel = reg_committee(Space.from_matrix(x), moved_y, removable=removable, seed=SEED)
    assert not np.any(moved[sel.removed])


def test_a_model_without_predict_is_refused_by_name() -> None:
    with pytest.raises(UsageError, match=r"models\[2\]: 'sklearn.preprocessing.StandardScaler' "
                                         "has no predict"):
        parse_models(["knn", "sklearn.preprocessing.StandardScaler"], regression=True)
