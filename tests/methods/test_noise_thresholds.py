"""Per-class thresholds on out-of-fold probabilities (Northcutt, Jiang and Chuang 2021).

A small example worked by hand from the paper's definitions:

* threshold of class j, t_j: the mean probability of j over rows labelled j;
* confident joint C[i][j]: rows labelled i whose most probable class among
  those at or above their threshold is j (rows with none are not counted);
* calibrated joint: each row i of C scaled to the number of rows labelled i;
  the estimated number of mislabelled rows of class i is its off-diagonal sum;
* prune by class: in class i, that many rows, lowest probability of i first.

curate flags the candidates of the issue's rule (another class reaches its
threshold, the own label does not) first, then fills up to the estimate by
prune-by-class order.
"""

from __future__ import annotations

import numpy as np
import open_data
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold, cross_val_predict
from sklearn.preprocessing import MinMaxScaler

from curate.methods.noise import class_thresholds, confident_joint, threshold_flags
from curate.space import Space

# Twelve rows, three classes (worked by hand in the module docstring's terms):
# t = (0.8+0.7+0.6+0.1)/4 = 0.55, (0.8+0.7+0.9+0.2)/4 = 0.65, (0.8+0.4+0.35+0.3)/4 = 0.4625
PROBA = np.array([
    [0.8, 0.1, 0.1], [0.7, 0.2, 0.1], [0.6, 0.3, 0.1], [0.1, 0.8, 0.1],     # labelled 0
    [0.1, 0.8, 0.1], [0.2, 0.7, 0.1], [0.1, 0.9, 0.0], [0.1, 0.2, 0.7],     # labelled 1
    [0.1, 0.1, 0.8], [0.3, 0.3, 0.4], [0.35, 0.3, 0.35], [0.6, 0.1, 0.3],   # labelled 2
])
LABELS = np.repeat([0, 1, 2], 4)


def test_thresholds_and_confident_joint_by_hand() -> None:
    t, joint, calibrated = confident_joint(PROBA, LABELS, 3)
    np.testing.assert_allclose(t, [0.55, 0.65, 0.4625])
    # row 3 -> 1; row 7 -> 2; row 11 -> 0; rows 9 and 10 reach no threshold
    assert joint.tolist() == [[3, 1, 0], [0, 3, 1], [1, 0, 1]]
    np.testing.assert_allclose(calibrated, [[3, 1, 0], [0, 3, 1], [2, 0, 2]])


def test_flagged_rows_by_hand() -> None:
    """Estimates 1, 1, 2: rows 3, 7, 11 are candidates; class 2 fills up with row 10
    (own probability 0.35, below row 9's 0.4). Suggestions: 1, 2, 0, and for row 10 its
    most probable other class, 0 (0.35 against 0.3)."""
    positions, suggested, candidate, estimated = threshold_flags(PROBA, LABELS,
                                                                 np.ones(12, bool))
    assert estimated.tolist() == [1, 1, 2]
    assert np.flatnonzero(candidate).tolist() == [3, 7, 11]
    assert dict(zip(positions.tolist(), suggested.tolist(), strict=True)) == \
        {3: 1, 7: 2, 11: 0, 10: 0}


def test_rows_that_may_not_be_removed_are_passed_over() -> None:
    """Class 2's estimate of two is filled from removable rows only: 11, then 9."""
    removable = np.ones(12, bool)
    removable[10] = False
    positions, _, _, _ = threshold_flags(PROBA, LABELS, removable)
    assert sorted(positions.tolist()) == [3, 7, 9, 11]


def test_the_stage_applies_the_rule_to_scikit_learns_out_of_fold_probabilities() -> None:
    """End to end on wine with flipped labels: the stage's flags are the rule applied to
    cross_val_predict's probabilities (logistic regression, same folds)."""
    X, y = open_data.load("wine")
    X = MinMaxScaler().fit_transform(X)
    y = y.copy()
    rng = np.random.default_rng(0)
    chosen = rng.choice(len(y), 18, replace=False)
    y[chosen] = (y[chosen] + rng.integers(1, 3, 18)) % 3
    proba = cross_val_predict(LogisticRegression(C=100.0, max_iter=1000, random_state=2),
                              X, y, cv=StratifiedKFold(5, shuffle=True, random_state=2),
                              method="predict_proba")
    expected, _, _, _ = threshold_flags(proba, y, np.ones(len(y), bool))
    sel = class_thresholds(Space.from_matrix(X), y, removable=np.ones(len(y), bool), seed=2,
                           models=["linear"])
    assert sel.removed.tolist() == sorted(expected.tolist())
    assert len(sel.removed) > 0
