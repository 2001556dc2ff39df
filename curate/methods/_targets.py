"""Numeric targets: checks, spread, quantile bins, residuals and values written in target units.

Every regression method and the regression evaluation share these pieces:

* :func:`check_targets` turns a target column into float64 or stops with an
  :class:`~curate.errors.InputError` (exit code 3) naming what is wrong: text
  or true/false values, missing or infinite values, or a single value;
* :func:`target_spread` is the target's standard deviation (ddof 0), the
  scale that every "scaled residual" divides by;
* :func:`scaled_residuals` and :func:`out_of_fold_residuals` give the
  absolute residual of each row in units of that spread, against any
  prediction or against a scikit-learn regressor's out-of-fold predictions;
* :func:`quantile_bins` cuts the target into equal-frequency bins, used to
  stratify folds and by the ``discretized`` method;
* :func:`value_writer` writes target values with as many decimals as the
  target's spread calls for, and the unit after them ("41.0 h").
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from curate.errors import InputError, first_ids

__all__ = ["check_targets", "describe_target", "neighbour_mean_std", "out_of_fold_residuals", "quantile_bins",
           "regression_folds", "scaled_residuals", "target_spread", "value_writer"]


def _as_numbers(values: Any, where: str) -> np.ndarray:
    """The values as float64, or an InputError when they are text or true/false."""
    arr = values.to_numpy() if hasattr(values, "to_numpy") else np.asarray(values)
    kind = arr.dtype.kind
    if kind in "iuf":
        return np.asarray(arr, dtype=np.float64).reshape(-1)
    if kind == "O" and all(v is None or (isinstance(v, int | float | np.number)
                                          and not isinstance(v, bool | np.bool_)) for v in arr):
        return np.array([np.nan if v is None else float(v) for v in arr], dtype=np.float64)
    shown = ", ".join(repr(v) for v in dict.fromkeys(arr.tolist()) if v is not None)
    what = "true/false values" if kind == "b" else "text"
    raise InputError(f"{where}: the target holds {what} ({shown[:80]}), but a regression method "
                     "needs numbers",
                     hint="use a numeric target column, or set [input] task = \"classification\" "
                          "and use a classification method")


def check_targets(values: Any, *, where: str = "target",
                  ids: Sequence[object] | None = None) -> np.ndarray:
    """Return a numeric target as float64, or stop with an InputError that says what is wrong.

    Parameters
    ----------
    values : array-like or polars Series
        One target value per row.
    where : str
        Where the values come from, for the message (file and column, or a method key).
    ids : sequence, optional
        Row ids by position, to name the rows with missing or infinite values.

    Examples
    --------
    >>> check_targets([1, 2.5, 4]).tolist()
    [1.0, 2.5, 4.0]
    >>> check_targets(["12 h", "3 h"], where="hours")
    Traceback (most recent call last):
    ...
    curate.errors.InputError: hours: the target holds text ('12 h', '3 h'), but a regression \
method needs numbers
      hint: use a numeric target column, or set [input] task = "classification" and use a \
classification method
    >>> check_targets([1.0, float("nan"), 2.0], ids=["a", "b", "c"])
    Traceback (most recent call last):
    ...
    curate.errors.InputError: target: 1 row (b) has no finite target value
      hint: fill or drop those rows first, or give the column a schema rule that quarantines them
    """
    y = _as_numbers(values, where)
    bad = np.flatnonzero(~np.isfinite(y))
    if len(bad):
        names = [ids[int(i)] for i in bad] if ids is not None else bad.tolist()
        raise InputError(f"{where}: {first_ids(names)} {'has' if len(bad) == 1 else 'have'} no "
                         "finite target value",
                         hint="fill or drop those rows first, or give the column a schema rule "
                              "that quarantines them")
    if len(y) and np.all(y == y[0]):
        raise InputError(f"{where}: every one of the {len(y)} rows has the target {y[0]:g}, so "
                         "there is nothing to predict and no spread to compare residuals with",
                         hint="check that [input] label names the target column")
    return y


def target_spread(targets: np.ndarray) -> float:
    """The target's standard deviation (ddof 0): the unit of every scaled residual (0 when empty).

    Examples
    --------
    >>> target_spread(np.array([1.0, 3.0])), target_spread(np.zeros(0))
    (1.0, 0.0)
    """
    y = np.asarray(targets, dtype=np.float64)
    return float(np.std(y)) if len(y) else 0.0


def describe_target(values: np.ndarray) -> dict[str, float | int | None]:
    """Count, mean, standard deviation (ddof 0) and quartiles of a target, for summary.json.

    Examples
    --------
    >>> describe_target(np.array([1.0, 2.0, 3.0, 4.0, 5.0]))["median"]
    3.0
    >>> describe_target(np.zeros(0))["mean"] is None
    True
    """
    y = np.asarray(values, dtype=np.float64)
    names = ("min", "q25", "median", "q75", "max")
    out: dict[str, float | int | None] = {"rows": int(len(y)), "mean": None, "sd": None}
    out.update(dict.fromkeys(names))
    if len(y):
        out.update(mean=float(y.mean()), sd=float(y.std()))
        out.update(zip(names, (float(q) for q in np.quantile(y, (0.0, 0.25, 0.5, 0.75, 1.0))),
                       strict=True))
    return out


def scaled_residuals(targets: np.ndarray, predicted: np.ndarray,
                     spread: float | None = None) -> np.ndarray:
    """Absolute residual of each row, in units of the target's spread.

    ``spread`` defaults to :func:`target_spread` of ``targets``; it must be > 0.

    Examples
    --------
    >>> scaled_residuals(np.array([1.0, 3.0]), np.array([2.0, 2.0])).tolist()
    [1.0, 1.0]
    """
    y = np.asarray(targets, dtype=np.float64)
    scale = target_spread(y) if spread is None else float(spread)
    if not scale > 0:
        raise ValueError("the target's spread is zero: residuals cannot be scaled by it")
    return np.abs(y - np.asarray(predicted, dtype=np.float64)) / scale


def neighbour_mean_std(targets: np.ndarray, neighbours: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean and standard deviation (ddof 0) of each row's neighbours' targets.

    ``neighbours`` is an ``(n, k)`` array of positions (as the engine returns them).

    Examples
    --------
    >>> m, s = neighbour_mean_std(np.array([0.0, 2.0, 4.0]), np.array([[1, 2], [0, 2], [0, 1]]))
    >>> m.tolist(), s.tolist()
    ([3.0, 2.0, 1.0], [1.0, 2.0, 1.0])
    """
    values = np.asarray(targets, dtype=np.float64)[neighbours]
    return values.mean(axis=1), values.std(axis=1)


def quantile_bins(targets: np.ndarray, bins: int) -> tuple[np.ndarray, np.ndarray]:
    """Equal-frequency bins: (bin code per row, edges).

    Edges are the target's quantiles at 0, 1/bins, ..., 1 (numpy's default,
    linear interpolation); repeated edges (many equal targets) merge bins, so
    there may be fewer than asked. Bin ``b`` holds values above ``edges[b]``
    up to and including ``edges[b + 1]``; the first bin includes its bottom
    (pandas' ``qcut`` cuts the same way).

    Examples
    --------
    >>> codes, edges = quantile_bins(np.array([1.0, 2.0, 3.0, 4.0, 5.0, 6.0]), 3)
    >>> codes.tolist(), edges.round(2).tolist()
    ([0, 0, 1, 1, 2, 2], [1.0, 2.67, 4.33, 6.0])
    """
    if bins < 1:
        raise ValueError("bins must be >= 1")
    y = np.asarray(targets, dtype=np.float64)
    if len(y) == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(2)
    edges = np.unique(np.quantile(y, np.linspace(0.0, 1.0, bins + 1)))
    if len(edges) == 1:
        return np.zeros(len(y), dtype=np.int64), np.array([edges[0], edges[0]])
    codes = np.searchsorted(edges[1:-1], y, side="left").astype(np.int64)
    return codes, edges


def regression_folds(targets: np.ndarray, folds: int, seed: int,
                     bins: int = 10) -> list[tuple[np.ndarray, np.ndarray]]:
    """Shuffled k-fold splits stratified by the target's quantile bins (common practice, no source).

    Up to ``bins`` equal-frequency bins, fewer when a bin would hold fewer
    rows than ``folds``; scikit-learn's ``StratifiedKFold`` then spreads each
    bin over the folds, so every test fold sees low, middle and high targets.

    Examples
    --------
    >>> splits = regression_folds(np.arange(20.0), 4, seed=0)
    >>> [len(test) for _, test in splits]
    [5, 5, 5, 5]
    """
    from sklearn.model_selection import StratifiedKFold

    y = np.asarray(targets, dtype=np.float64)
    count = max(1, min(bins, len(y) // max(folds, 1)))
    codes, _ = quantile_bins(y, count)
    while count > 1 and np.bincount(codes).min() < folds:
        count -= 1
        codes, _ = quantile_bins(y, count)
    split = StratifiedKFold(n_splits=folds, shuffle=True, random_state=seed)
    return [(train, test) for train, test in split.split(np.zeros((len(y), 1)), codes)]


def out_of_fold_residuals(matrix: np.ndarray, targets: np.ndarray, estimator: Any = None, *,
                          folds: int = 5, seed: int = 0) -> np.ndarray:
    """Each row's absolute residual against out-of-fold predictions, in units of the spread.

    Every row is predicted by a copy of ``estimator`` (a scikit-learn
    regressor; default ``KNeighborsRegressor(n_neighbors=5)``) fitted on the
    other folds of :func:`regression_folds`; the result is
    :func:`scaled_residuals` of those predictions. This is the regression form
    of a row's doubt: how far its target lies from what the rest of the table
    says about rows like it.

    Examples
    --------
    >>> x = np.arange(40.0).reshape(-1, 1)
    >>> y = 2.0 * x[:, 0]
    >>> y[7] = 300.0
    >>> int(np.argmax(out_of_fold_residuals(x, y, folds=4)))
    7
    """
    from sklearn.base import clone
    from sklearn.neighbors import KNeighborsRegressor

    y = np.asarray(targets, dtype=np.float64)
    x = np.asarray(matrix, dtype=np.float64)
    model = KNeighborsRegressor(n_neighbors=5) if estimator is None else estimator
    predicted = np.empty(len(y))
    for train, test in regression_folds(y, folds, seed):
        predicted[test] = clone(model).fit(x[train], y[train]).predict(x[test])
    return scaled_residuals(y, predicted)


def value_writer(targets: np.ndarray, unit: str = "") -> Callable[[float], str]:
    """A function that writes a target value for people: decimals by the spread, then the unit.

    One decimal below the spread's leading digit (at most six), and at least
    one decimal while the spread is below 100; all values of one table are
    written alike.

    Examples
    --------
    >>> write = value_writer(np.array([2.0, 12.0, 41.0, 30.0]), "h")
    >>> write(41.0), write(12.345)
    ('41.0 h', '12.3 h')
    >>> value_writer(np.array([1000.0, 5000.0]))(1234.5)
    '1234'
    """
    spread = target_spread(targets)
    decimals = 2 if spread <= 0 else int(min(6, max(0, 1 - np.floor(np.log10(spread)))))
    if spread < 100:
        decimals = max(decimals, 1)
    suffix = f" {unit}" if unit else ""

    def write(value: float) -> str:
        return f"{value:.{decimals}f}{suffix}"

    return write
