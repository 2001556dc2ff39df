"""RegCNN against its published rule, worked by hand and run step by step with scikit-learn.

Outside references: the RegCNN rule of Kordos and Blachnik 2012 (present the
rows one by one; a row joins the kept set when the kept rows predict its
target worse than ``alpha`` times the standard deviation of its k nearest
neighbours' targets), with scikit-learn's ``KNeighborsRegressor`` refitted on
the kept rows before every row as the predicting model and
``NearestNeighbors`` for the neighbours that set each threshold. Data: a
seeded draw of continuous points (no ties in distance).
"""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.neighbors import KNeighborsRegressor, NearestNeighbors

from curate.methods import regression
from curate.methods.regression import reg_cnn
from curate.space import Space


def test_hand_worked_example() -> None:
    """k = 2, alpha = 1, input order; targets 1, 1, 1.5, 9, 9, 9.5 at x = 0..5.

    Thresholds (sd of the two nearest neighbours' targets): row 1: 0.25, row 2: 4,
    row 3: 3.75, row 4: 0.25, row 5: 0. Row 0 starts the kept set. Row 1: predicted 1 by
    row 0, error 0 <= 0.25, leaves. Row 2: predicted 1, error 0.5 <= 4, leaves. Row 3:
    predicted 1, error 8 > 3.75, joins. Row 4: mean of rows 3 and 0 is 5, error 4 > 0.25,
    joins. Row 5: mean of rows 4 and 3 is 9, error 0.5 > 0, joins.
    """
    space = Space.from_matrix([[float(i)] for i in range(6)])
    y = np.array([1.0, 1.0, 1.5, 9.0, 9.0, 9.5])
    sel = reg_cnn(space, y, removable=np.ones(6, bool), k=2, alpha=1.0, order="input")
    assert sel.kept.tolist() == [0, 3, 4, 5]
    assert sel.removed.tolist() == [1, 2] and sel.kept_as.tolist() == [0, 0]
    assert sel.reason == ["predicted-well", "predicted-well"]


def _step_by_step(x: np.ndarray, y: np.ndarray, k: int, alpha: float,
                  order: np.ndarray) -> list[int]:
    _, ind = NearestNeighbors(n_neighbors=k + 1).fit(x).kneighbors(x)
    limit = alpha * y[ind[:, 1:]].std(axis=1)  # column 0 is the row itself (no ties here)
    kept = [int(order[0])]
    for i in order[1:]:
        model = KNeighborsRegressor(n_neighbors=min(k, len(kept))).fit(x[kept], y[kept])
        if abs(y[i] - model.predict(x[i:i + 1])[0]) > limit[i]:
            kept.append(int(i))
    return sorted(kept)


@pytest.mark.parametrize(("n", "k", "alpha", "order", "block"), [
    (300, 3, 0.5, "input", 512), (300, 5, 1.0, "shuffled", 512),
    (300, 9, 0.25, "shuffled", 512), (300, 5, 0.5, "shuffled", 40)])  # 40: eight blocks
def test_kept_rows_equal_the_rule_run_with_scikit_learn(n: int, k: int, alpha: float, order: str,
                                                        block: int, monkeypatch) -> None:
    monkeypatch.setattr(regression, "BLOCK", block)
    rng = np.random.default_rng(11)
    x = rng.uniform(size=(n, 3))
    y = np.sin(6 * x[:, 0]) + x[:, 1] ** 2 + rng.normal(scale=0.1, size=n)
    sel = reg_cnn(Space.from_matrix(x), y, removable=np.ones(n, bool), k=k, alpha=alpha,
                  order=order, seed=5)
    # The presentation order is numpy's seeded permutation (documented), or input order.
    presented = np.arange(n) if order == "input" else np.random.default_rng(5).permutation(n)
    assert sel.kept.tolist() == _step_by_step(x, y, k, alpha, presented)
    assert np.all(np.isin(sel.kept_as, sel.kept))


def test_rows_that_may_not_be_removed_start_the_kept_set() -> None:
    space = Space.from_matrix([[float(i)] for i in range(6)])
    y = np.array([1.0, 1.0, 1.5, 9.0, 9.0, 9.5])
    removable = np.ones(6, bool)
    removable[[1, 2]] = False
    sel = reg_cnn(space, y, removable=removable, k=2, alpha=1.0, order="input")
    assert {1, 2} <= set(sel.kept.tolist())
