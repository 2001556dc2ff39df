"""The statistics of a regression evaluation: errors per fold, the mean baseline, outliers.

The regression counterpart of :mod:`curate.stats`, sharing its fold record
(:class:`~curate.stats.FoldOutcome`: ``baseline`` holds the baseline RMSE and
``flipped`` the rows whose target was moved), its paired test and its
detection counts. Everything is a pure function of arrays; randomness comes
only from an explicit seed.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from curate.evaluation.stats import FoldOutcome, Key, fold_record
from curate.methods._targets import target_spread

__all__ = ["OUTLIER_SDS", "REGRESSION_METRICS", "inject_outliers",
           "mean_baseline_rmse", "regression_metrics", "regression_record"]

REGRESSION_METRICS = ("rmse", "mae", "r2")
OUTLIER_SDS = (3.0, 5.0)  # "several standard deviations": each shift drawn from this range


def regression_metrics(truth: np.ndarray, predicted: np.ndarray) -> dict[str, float]:
    """Root mean squared error, mean absolute error and R² (scikit-learn's definitions).

    Examples
    --------
    >>> regression_metrics(np.array([1.0, 2.0, 3.0]), np.array([1.0, 2.0, 5.0]))
    {'rmse': 1.1547005383792515, 'mae': 0.6666666666666666, 'r2': -1.0}
    """
    from sklearn.metrics import mean_absolute_error, r2_score, root_mean_squared_error

    return {"rmse": float(root_mean_squared_error(truth, predicted)),
            "mae": float(mean_absolute_error(truth, predicted)),
            "r2": float(r2_score(truth, predicted))}


def mean_baseline_rmse(train_targets: np.ndarray, test_targets: np.ndarray) -> float:
    """RMSE on the test part of always predicting the training part's mean target.

    Examples
    --------
    >>> mean_baseline_rmse(np.array([1.0, 3.0]), np.array([2.0, 4.0]))
    1.4142135623730951
    """
    mean = float(np.mean(train_targets))
    return float(np.sqrt(np.mean((np.asarray(test_targets, dtype=np.float64) - mean) ** 2)))


def inject_outliers(targets: np.ndarray, share: float, seed: int | Sequence[int],
                    sds: tuple[float, float] = OUTLIER_SDS) -> tuple[np.ndarray, np.ndarray]:
    """Move a seeded share of targets by several standard deviations; return them and the mask.

    ``round(share * n)`` rows are drawn without replacement; each moves up or
    down (a fair draw) by a distance drawn uniformly from ``sds`` times the
    standard deviation (ddof 0) of ``targets`` before any move.

    Examples
    --------
    >>> y = np.arange(20.0)
    >>> new, moved = inject_outliers(y, 0.1, seed=1)
    >>> int(moved.sum()), bool(np.all(np.abs(new - y)[moved] >= 3 * y.std()))
    (2, True)
    >>> bool(np.all(new[~moved] == y[~moved]))
    True
    """
    if not 0.0 <= share <= 1.0:
        raise ValueError(f"outlier share must be from 0 to 1, got {share}")
    y = np.asarray(targets, dtype=np.float64)
    rng = np.random.default_rng(seed)
    count = int(round(share * len(y)))
    chosen = np.sort(rng.choice(len(y), size=count, replace=False))
    sign = rng.choice(np.array([-1.0, 1.0]), size=count)
    size = rng.uniform(sds[0], sds[1], size=count) * target_spread(y)
    new = y.copy()
    new[chosen] += sign * size
    moved = np.zeros(len(y), dtype=bool)
    moved[chosen] = True
    return new, moved


def regression_record(folds: Sequence[FoldOutcome], key: Key, ratio: float) -> dict[str, Any]:
    """One results record: mean errors over folds and, for a curated key, the paired test on RMSE.

    ``rmse_difference`` is curated minus uncurated (negative: curation helped);
    the test is :func:`~curate.stats.corrected_resampled_ttest` on the per-fold
    RMSE with ``ratio = n_test / n_train``.

    Examples
    --------
    >>> def fold(plain, cured):
    ...     scores = {("m", None, c): {"rmse": v, "mae": v, "r2": 0.5}
    ...               for c, v in ((False, plain), (True, cured))}
    ...     return FoldOutcome(9, 1, 6, 2.0, scores, set(), {}, [], None, None)
    >>> r = regression_record([fold(1.0, 0.8), fold(1.2, 1.0)], ("m", None, True), 1 / 9)
    >>> round(r["rmse"], 3), round(r["rmse_difference"], 3), r["kept_share"]
    (0.9, -0.2, 0.6666666666666666)
    """
    return fold_record(folds, key, ratio, REGRESSION_METRICS, "rmse")
