"""RegENN and the regression hardness score against their published rule and scikit-learn.

Outside references: the RegENN rule of Kordos and Blachnik 2012 (remove a row
when ``|y - mean| > alpha * sd`` over its k nearest neighbours' targets),
worked by hand below; scikit-learn's ``NearestNeighbors`` for the neighbours
and numpy for the mean and standard deviation on scikit-learn's bundled
diabetes set (Efron et al. 2004), range-normalised with ``MinMaxScaler``.
"""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.datasets import load_diabetes
from sklearn.neighbors import NearestNeighbors
from sklearn.preprocessing import MinMaxScaler

from curate.errors import InputError
from curate.methods.regression import reg_enn, regression_hardness
from curate.space import Space

LINE = Space.from_matrix([[float(i)] for i in range(7)])


def everyone(n: int) -> np.ndarray:
    return np.ones(n, dtype=bool)


def test_hand_worked_example() -> None:
    """k = 3, alpha = 3 on targets 10, 12, 11, 50, 10, 12, 11 at x = 0..6.

    Row 3 (50): neighbours rows 2 and 4 (distance 1) and row 1 (distance 2, the lower of
    rows 1 and 5): targets 11, 10, 12, mean 11, sd sqrt(2/3) = 0.816; |50 - 11| = 39 >
    3 * 0.816, so it goes (39 / 0.816 = 47.8 standard deviations).
    Row 0 (10): neighbours rows 1, 2, 3: targets 12, 11, 50, mean 24.33, sd 18.15;
    |10 - 24.33| = 14.33 < 54.5, so it stays; every other row also has row 3 among its
    neighbours, and stays the same way.
    """
    y = np.array([10.0, 12, 11, 50, 10, 12, 11])
    sel = reg_enn(LINE, y, removable=everyone(7), k=3, alpha=3.0, unit="h")
    assert sel.removed.tolist() == [3]
    assert sorted(sel.neighbours[0].tolist()) == [1, 2, 4]
    assert sel.detail[0] == ("its target 50.0 h is 47.8 standard deviations from its 3 nearest "
                             "neighbours' mean 11.0 h (their standard deviation 0.8 h), more "
                             "than alpha = 3")


def test_more_than_is_strict_and_equal_neighbours_leave_no_room() -> None:
    """Targets 5, 5, 5, 6, 5 at x = 0..4, k = 2 (hand-worked): row 3's neighbours (rows 2
    and 4) both have 5, so sd = 0 and its difference 1 > 0 removes it; row 0's neighbours
    also both have 5, and its difference 0 is not more than 0, so it stays."""
    space = Space.from_matrix([[float(i)] for i in range(5)])
    sel = reg_enn(space, np.array([5.0, 5, 5, 6, 5]), removable=everyone(5), k=2, alpha=1.0)
    assert sel.removed.tolist() == [3]
    assert "do not vary at all" in sel.detail[0]


def test_rows_that_may_not_be_removed_stay() -> None:
    y = np.array([10.0, 12, 11, 50, 10, 12, 11])
    removable = everyone(7)
    removable[3] = False
    assert reg_enn(LINE, y, removable=removable, k=3).removed.tolist() == []


def _sklearn_neighbour_targets(x: np.ndarray, y: np.ndarray, k: int) -> np.ndarray:
    _, ind = NearestNeighbors(n_neighbors=k + 1).fit(x).kneighbors(x)
    own = ind == np.arange(len(x))[:, None]
    assert own.sum(axis=1).tolist() == [1] * len(x)  # no two diabetes rows are equal
    return y[ind[~own].reshape(len(x), k)]


@pytest.mark.parametrize(("k", "alpha"), [(5, 2.0), (9, 3.0)])
def test_same_rows_as_the_rule_on_scikit_learn_neighbours(k: int, alpha: float) -> None:
    x, y = load_diabetes(return_X_y=True)
    x = MinMaxScaler().fit_transform(x)
    around = _sklearn_neighbour_targets(x, y, k)
    expected = np.flatnonzero(np.abs(y - around.mean(axis=1)) > alpha * around.std(axis=1))
    sel = reg_enn(Space.from_matrix(x), y, removable=everyone(len(y)), k=k, alpha=alpha)
    np.testing.assert_array_equal(np.sort(sel.removed), expected)


def test_hardness_is_the_residual_against_the_neighbour_mean_in_target_sds() -> None:
    x, y = load_diabetes(return_X_y=True)
    x = MinMaxScaler().fit_transform(x)
    expected = np.abs(y - _sklearn_neighbour_targets(x, y, 5).mean(axis=1)) / np.std(y)
    sel = regression_hardness(Space.from_matrix(x), y, removable=everyone(len(y)), k=5,
                              threshold=2.0)
    np.testing.assert_allclose(sel.scores["hardness"], expected, rtol=1e-12)
    np.testing.assert_array_equal(np.sort(sel.removed), np.flatnonzero(expected >= 2.0))


@pytest.mark.parametrize("method", [reg_enn, regression_hardness])
def test_text_targets_are_refused_with_exit_code_3(method) -> None:
    with pytest.raises(InputError, match="holds text") as caught:
        method(LINE, np.array(["a", "b"] * 3 + ["a"]), removable=everyone(7))
    assert caught.value.exit_code == 3
