"""Column pieces of the mixed-type distances: missing values, scaling, overlap and VDM.

HEOM and HVDM (Wilson and Martinez 1997, JAIR 6, 1-34) both read
``sqrt(sum_a d_a(x_a, y_a)^2)`` over the attributes ``a`` (the paper's equation 11),
with ``d_a = 1`` when either value is missing. Where no value is missing each
``d_a`` is a Euclidean distance between embedded values, so the whole distance is
plain Euclidean distance in the embedded space and every fast engine serves it:

* numeric: ``x / range`` (HEOM) or ``x / (4 sigma)`` (HVDM), sigma being the
  population standard deviation (ddof 0, the paper does not say which) of the
  column's present values;
* nominal, overlap: a one-hot vector scaled by ``1/sqrt(2)``, so that two
  different values are at distance 1 and equal ones at 0;
* nominal, VDM: the vector of class-conditional probabilities
  ``P(c | x) = N_axc / N_ax`` (counts over rows where the value is present), whose
  Euclidean distance is the paper's normalised vdm N2,
  ``sqrt(sum_c (P(c|x) - P(c|y))^2)`` (its equation 15).

The authors' erratum (March 2000) confirms that reading: N2 carries a square root
so that, squared again in equation 11, the VDM term enters HVDM as the plain sum of
squares; its other corrections (square roots over the sums of equations 19 to 26)
concern IVDM and WVDM, which curate does not implement.

Fitting on some rows (``fit``, a boolean mask; every row when None) takes every
statistic from those rows only and applies it to all rows, so that a test part
never shapes its own embedding:

* numeric: range, mean, standard deviation and quartiles come from the fit rows;
  other rows scale with them and may fall outside [0, 1] (or beyond four sigma);
* nominal levels are those seen in the fit rows; every other value is *unseen*
  (code ``len(levels)``). Under overlap an unseen value sits at distance exactly
  1 from every level (the point ``s * (1, ..., 1)`` solving that, see
  :func:`unseen_overlap`), and two unseen values sit at distance 0 from each
  other, even when they differ: the embedding has a fixed size, fixed by the fit
  rows. Under VDM an unseen value has ``P(c | x) = 0`` for every class, since
  ``N_ax = 0`` (the paper defines ``P`` as 0 then, from memory; imbalanced-learn's
  ValueDifferenceMetric gives the same zero row);
* imputed medians and modes, VDM counts and mutual-information weights read the
  fit rows and their labels only; labels of other rows are never read.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np
import polars as pl

from curate.errors import ConstantColumnWarning, InputError, first_ids

__all__ = [
    "LARGEST",
    "Column",
    "encode_nominal",
    "encode_numeric",
    "mutual_information_weights",
    "prepare_column",
    "unseen_overlap",
]


# The largest magnitude a numeric value may have. Beyond it, a column's range, mean or
# standard deviation can overflow to infinity (squares of 1.34e154 already do; sums of
# squares over 10**8 rows of 1e150 stay finite), and such values are input errors in
# practice (common practice, no source).
LARGEST = 1e150


@dataclass(frozen=True)
class Column:
    """One feature column made ready for encoding.

    ``values`` holds floats for a numeric column and integer codes into
    ``levels`` (sorted) for a nominal one, ``len(levels)`` marking a value that
    the fit rows never showed; ``gaps`` marks missing cells, whose entry in
    ``values`` is NaN or -1 and never read.
    """

    name: str
    nominal: bool
    values: np.ndarray
    gaps: np.ndarray
    levels: tuple[str, ...] = ()

    def released(self) -> Column:
        """The same column without its values (once embedded, they are not read again).

        Examples
        --------
        >>> Column("a", False, np.ones(3), np.zeros(3, bool)).released().values.size
        0
        """
        return replace(self, values=np.zeros(0, dtype=self.values.dtype))


def prepare_column(series: pl.Series, nominal: bool, ids: Sequence[object],
                   missing: str, fit: np.ndarray | None = None) -> Column:
    """Read one column and apply the missing-value policy.

    ``missing`` is ``"stop"`` (a missing value is an :class:`InputError`),
    ``"impute"`` (numeric: the median of the present values; nominal: the most
    frequent value, ties going to the first in sorted order) or ``"far"`` (gaps
    are kept and cost distance 1). Infinite numbers are always an error.
    Levels and imputed values come from the ``fit`` rows (boolean mask; all
    rows when None).

    Examples
    --------
    >>> c = prepare_column(pl.Series("a", [1.0, None, 5.0, 2.0]), False, [0, 1, 2, 3], "impute")
    >>> c.values.tolist(), c.gaps.any()
    ([1.0, 2.0, 5.0, 2.0], np.False_)
    >>> c = prepare_column(pl.Series("b", ["x", None, "y", "y"]), True, [0, 1, 2, 3], "far")
    >>> c.values.tolist(), c.levels, c.gaps.tolist()
    ([0, -1, 1, 1], ('x', 'y'), [False, True, False, False])
    >>> fit = np.array([True, True, True, False])
    >>> c = prepare_column(pl.Series("b", ["x", None, "y", "z"]), True, [0, 1, 2, 3], "impute", fit)
    >>> c.values.tolist(), c.levels
    ([0, 0, 1, 2], ('x', 'y'))
    """
    name = series.name
    if nominal:
        text = series.cast(pl.String)
        gaps = text.is_null().to_numpy()
        seen = text if fit is None else text.filter(pl.Series(fit))
        levels = tuple(sorted(seen.drop_nulls().unique().to_list()))
        # Values the fit rows never showed share the code len(levels): "unseen".
        values = text.replace_strict(list(levels), list(range(len(levels))),
                                     default=len(levels), return_dtype=pl.Int64).to_numpy()
        values = np.where(gaps, -1, values).astype(np.int64)
    else:
        values = series.cast(pl.Float64).fill_null(np.nan).to_numpy().astype(np.float64)
        gaps = np.isnan(values)
        _check_finite(name, values, ids)
        levels = ()
    if gaps.any() and missing == "stop":
        rows = [ids[int(i)] for i in np.flatnonzero(gaps)]
        raise InputError(f"column {name!r} has missing values in {first_ids(rows)}",
                         hint="fill the gaps in the input, or set [space] missing = \"impute\" "
                              "(median or most frequent value) or \"far\" (a missing value "
                              "is at distance 1)")
    if gaps.any() and missing == "impute":
        values = _impute(name, values, gaps, nominal, len(levels), fit)
        gaps = np.zeros_like(gaps)
    return Column(name, nominal, values, gaps, levels)


def _check_finite(name: str, values: np.ndarray, ids: Sequence[object]) -> None:
    """Refuse infinite values and values beyond :data:`LARGEST` in magnitude."""
    with np.errstate(invalid="ignore"):
        huge = np.abs(values) > LARGEST  # NaN compares False: gaps pass
    if not huge.any():
        return
    at = np.flatnonzero(huge)
    rows = [ids[int(i)] for i in at]
    shown = ", ".join(f"{v:g}" for v in values[at[:5]])
    what = "infinite values" if np.isinf(values[at]).all() else \
        f"values out of range (beyond ±{LARGEST:g})"
    raise InputError(f"column {name!r} has {what} in {first_ids(rows)}: {shown}",
                     hint="fix or remove those rows, or add a max/min rule and "
                          "on_invalid = \"quarantine\" in [input]")


def _impute(name: str, values: np.ndarray, gaps: np.ndarray, nominal: bool,
            n_levels: int, fit: np.ndarray | None) -> np.ndarray:
    """Fill gaps with the median (numeric) or the most frequent value (nominal) of the fit rows."""
    source = ~gaps if fit is None else ~gaps & fit
    if not source.any():
        where = "every row" if fit is None else "every fit row"
        raise InputError(f"column {name!r} has no value to impute from: {where} is missing",
                         hint="leave the column out of the features, or set [space] "
                              "missing = \"far\"")
    out = values.copy()
    if nominal:
        out[gaps] = int(np.bincount(values[source], minlength=n_levels).argmax())
    else:
        out[gaps] = float(np.median(values[source]))
    return out


def _warn_constant(name: str, fit: np.ndarray | None) -> None:
    rows = "" if fit is None else " in the fit rows"
    warnings.warn(f"column {name!r} is constant{rows}; it contributes nothing to distances "
                  f"between rows where it is present{rows}", ConstantColumnWarning,
                  stacklevel=3)


def unseen_overlap(n_levels: int, manhattan: bool = False) -> np.ndarray:
    """The overlap embedding of a value outside the ``n_levels`` known levels.

    Known level ``k`` sits at ``v e_k`` (``v = 1/sqrt(2)``, or ``1/2`` for
    Manhattan distance). The point ``s (1, ..., 1)`` is at Euclidean distance 1
    from every ``v e_k`` when ``n s^2 - sqrt(2) s - 1/2 = 0``; we take the
    negative root. For Manhattan distance ``s = -1 / (2n)`` gives
    ``(n - 1)|s| + |s - 1/2| = 1``.

    Examples
    --------
    >>> u = unseen_overlap(3)
    >>> np.linalg.norm(np.eye(3) / np.sqrt(2) - u, axis=1).round(12).tolist()
    [1.0, 1.0, 1.0]
    """
    if n_levels == 0:
        return np.zeros(0)
    if manhattan:
        return np.full(n_levels, -1.0 / (2 * n_levels))
    s = (np.sqrt(2.0) - np.sqrt(2.0 + 2.0 * n_levels)) / (2 * n_levels)
    return np.full(n_levels, s)


def encode_numeric(column: Column, scale: str, fit: np.ndarray | None = None) -> np.ndarray:
    """Scale a numeric column into one embedded dimension (gaps become 0).

    ``scale`` is ``"range"`` (divide by max - min), ``"zscore"`` (by the
    standard deviation), ``"robust"`` (by the interquartile range, centred on the
    median), ``"4sd"`` (by four standard deviations, as in HVDM) or ``"none"``
    (the values as they are, for pre-scaled features and embeddings). Standard
    deviations are population ones (ddof 0) over the present values of the
    ``fit`` rows (all rows when None); the other rows are scaled with them.

    Examples
    --------
    >>> c = prepare_column(pl.Series("a", [0.0, 5.0, 10.0]), False, [0, 1, 2], "stop")
    >>> encode_numeric(c, "range").ravel().tolist()
    [0.0, 0.5, 1.0]
    >>> encode_numeric(c, "range", np.array([True, True, False])).ravel().tolist()
    [0.0, 1.0, 2.0]
    >>> encode_numeric(c, "none").ravel().tolist()
    [0.0, 5.0, 10.0]
    """
    source = ~column.gaps if fit is None else ~column.gaps & fit
    present = column.values[source]
    out = np.zeros((len(column.values), 1))
    if len(present) == 0:
        _warn_constant(column.name, fit)
        return out
    factor, low, span = _scaling(present, scale)
    if span == 0 or not np.isfinite(span):
        _warn_constant(column.name, fit)
        return out
    out[~column.gaps, 0] = (column.values[~column.gaps] / factor - low) / span
    return out


def _scaling(present: np.ndarray, scale: str) -> tuple[float, float, float]:
    """``(factor, low, span)``: a value ``x`` embeds as ``(x / factor - low) / span``.

    ``factor`` is 1 unless the plain statistics overflow (values near the float
    limits, whose range or squares exceed the largest float): then the values
    are divided by their largest magnitude first, so that no difference, sum or
    square can reach infinity, and the column is not mistaken for a constant one.

    Examples
    --------
    >>> _scaling(np.array([0.0, 5.0, 10.0]), "range")
    (1.0, 0.0, 10.0)
    >>> _scaling(np.array([-1e308, 0.0, 1e308]), "range")
    (1e+308, -1.0, 2.0)
    """
    with np.errstate(over="ignore", invalid="ignore"):
        low, span = _plain_location_span(present, scale)
    if np.isfinite(low) and np.isfinite(span):
        return 1.0, low, span
    factor = float(np.max(np.abs(present)))
    low, span = _plain_location_span(present / factor, scale)
    return factor, low, span


def _plain_location_span(present: np.ndarray, scale: str) -> tuple[float, float]:
    if scale == "none":
        # Unscaled, but a column with one value still contributes nothing: say so.
        return 0.0, (1.0 if present.max() > present.min() else 0.0)
    if scale == "range":
        low, span = present.min(), present.max() - present.min()
    elif scale == "robust":
        q1, low, q3 = np.percentile(present, [25, 50, 75])
        span = q3 - q1
    else:
        low, span = present.mean(), present.std() * (4.0 if scale == "4sd" else 1.0)
    return float(low), float(span)


def encode_nominal(column: Column, how: str, classes: np.ndarray | None = None,
                   n_classes: int = 0, fit: np.ndarray | None = None) -> np.ndarray:
    """Embed a nominal column: ``how`` is ``"overlap"``, ``"overlap-l1"`` or ``"vdm"``.

    Overlap gives one-hot rows scaled so that two different values are at
    Euclidean distance 1 (``1/sqrt(2)`` per position) or Manhattan distance 1
    (``1/2``, ``"overlap-l1"``). VDM gives each value its vector of
    ``P(class | value)`` over the ``fit`` rows (all when None) where the value
    is present; ``classes`` holds each row's class code in ``range(n_classes)``
    (read at fit rows only). Unseen values are embedded as the module docstring
    says; gaps become zero rows.

    Examples
    --------
    >>> c = prepare_column(pl.Series("b", ["x", "x", "y"]), True, [0, 1, 2], "stop")
    >>> encode_nominal(c, "vdm", np.array([0, 1, 1]), 2).tolist()
    [[0.5, 0.5], [0.5, 0.5], [0.0, 1.0]]
    """
    codes = column.values
    present = ~column.gaps
    n_levels = len(column.levels)
    if n_levels <= 1:
        _warn_constant(column.name, fit)
    if how == "vdm":
        if classes is None:
            raise ValueError("vdm needs the class of every row")
        counted = present if fit is None else present & fit
        counts = np.zeros((n_levels, n_classes))
        np.add.at(counts, (codes[counted], classes[counted]), 1.0)
        # Every level occurs in some counted row, so no row of counts is all zero.
        table = np.vstack([counts / counts.sum(axis=1, keepdims=True), np.zeros(n_classes)])
    else:
        value = 0.5 if how == "overlap-l1" else 1.0 / np.sqrt(2.0)
        table = np.vstack([np.eye(n_levels) * value,
                           unseen_overlap(n_levels, how == "overlap-l1")])
    out = np.zeros((len(codes), table.shape[1]))
    out[present] = table[codes[present]]
    return out


def mutual_information_weights(columns: Sequence[Column], classes: np.ndarray,
                               seed: int = 0, fit: np.ndarray | None = None) -> np.ndarray:
    """One weight per column: its mutual information with the class, scaled to mean 1.

    Uses scikit-learn's ``mutual_info_classif`` (nominal columns declared
    discrete, ``random_state=seed``) on the raw values of the ``fit`` rows (all
    when None); for this estimate only, a missing number stands at the column's
    median and a missing category is one more category. If no column carries
    information, every weight is 1.

    Examples
    --------
    >>> cols = [prepare_column(pl.Series("a", ["x", "y"] * 10), True, list(range(20)), "stop"),
    ...         prepare_column(pl.Series("b", ["u"] * 10 + ["v"] * 10), True, list(range(20)),
    ...                        "stop")]
    >>> mutual_information_weights(cols, np.array([0, 1] * 10)).round(3).tolist()
    [2.0, 0.0]
    """
    from sklearn.feature_selection import mutual_info_classif

    rows = np.ones(len(classes), dtype=bool) if fit is None else fit
    classes = classes[rows]
    table = np.empty((len(classes), len(columns)))
    for j, col in enumerate(columns):
        filled = col.values[rows].astype(np.float64)
        gaps = col.gaps[rows]
        if gaps.any():
            present = filled[~gaps]
            stand_in = len(col.levels) if col.nominal else (
                float(np.median(present)) if len(present) else 0.0)
            filled[gaps] = stand_in
        table[:, j] = filled
    discrete = np.array([c.nominal for c in columns], dtype=bool)
    info = mutual_info_classif(table, classes, discrete_features=discrete, random_state=seed)
    if not np.any(info > 0):
        return np.ones(len(columns))
    return info / info.mean()
