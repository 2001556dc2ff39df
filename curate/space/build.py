"""Turn a validated table into a matrix in which the chosen distance is plain Lp distance.

``distance`` picks how columns are embedded (see :mod:`curate.space.columns`):

* ``"euclidean"`` / ``"manhattan"``: numeric columns scaled by ``scale`` (range to
  [0, 1] by default, or z-score, or robust, or ``"none"``: as they are); nominal
  columns one-hot, scaled so that two different values are at distance 1 (the
  overlap metric).
* ``"heom"``: Wilson and Martinez's HEOM, numeric by range, nominal by overlap.
* ``"hvdm"``: their HVDM, numeric by four standard deviations, nominal by VDM
  (needs the labels).

Where no value is missing, HEOM and HVDM are Euclidean distance between the
embedded rows and the space's ``metric`` is ``"euclidean"``. Under
``missing = "far"`` with gaps present the metric becomes ``"<distance>-missing"``
and :meth:`Space.distances` applies the definition exactly: embedded part for
attributes present in both rows, 1 for each attribute missing in either.

A column weight ``w`` multiplies that column's squared contribution under
Euclidean-type distances (so its distance part by ``sqrt(w)``) and its absolute
contribution under Manhattan distance; a missing value then costs ``w``.

For evaluation without leakage, ``build_space(..., fit_rows=...)`` takes every
statistic (scales, levels, VDM probabilities, imputed values, constant columns,
learned weights) from the fit rows and their labels only, and applies it to all
rows; :func:`fit_space` does the same as a model whose ``transform`` embeds new
rows later. How values the fit rows never showed are embedded is described in
:mod:`curate.space.columns`.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np
import polars as pl

from curate.errors import ConstantColumnWarning, InputError, PipelineFileError, UsageError
from curate.settings import NOMINAL_KINDS, EngineSettings, SpaceSettings
from curate.space.columns import (
    Column,
    encode_nominal,
    encode_numeric,
    mutual_information_weights,
    prepare_column,
)
from curate.space.labels import encode_labels
from curate.space.points import Space

__all__ = ["SpaceModel", "WEIGHT_SEED", "build_space", "fit_space", "identity_codes"]

# Fixed so that learned weights, and so the whole run, repeat exactly.
WEIGHT_SEED = 0


def _resolve_weights(settings: SpaceSettings, prepared: list[Column],
                     classes: np.ndarray | None, fit: np.ndarray | None) -> dict[str, float]:
    """Weight per column: learned, or set by hand (default 1)."""
    names = [c.name for c in prepared]
    if isinstance(settings.weights, str):
        if classes is None:
            raise UsageError("[space] weights = \"mutual-information\" needs the labels",
                             hint="pass labels= to build_space")
        learned = mutual_information_weights(prepared, classes, seed=WEIGHT_SEED, fit=fit)
        return dict(zip(names, (float(w) for w in learned), strict=True))
    unknown = sorted(set(settings.weights) - set(names))
    if unknown:
        raise PipelineFileError(f"[space] weights names columns that are not features: "
                                f"{', '.join(map(repr, unknown))}",
                                hint=f"use feature columns: {', '.join(map(repr, names))}")
    return {name: float(settings.weights.get(name, 1.0)) for name in names}


def _embed(col: Column, settings: SpaceSettings, classes: np.ndarray | None,
           class_names: np.ndarray, fit: np.ndarray | None) -> tuple[np.ndarray, list[str]]:
    """Embedded block and dimension names of one prepared column."""
    distance = settings.distance
    if not col.nominal:
        scale = {"heom": "range", "hvdm": "4sd"}.get(distance, settings.scale)
        return encode_numeric(col, scale, fit), [col.name]
    if distance == "hvdm":
        return (encode_nominal(col, "vdm", classes, len(class_names), fit),
                [f"{col.name}|{c}" for c in class_names])
    how = "overlap-l1" if distance == "manhattan" else "overlap"
    return encode_nominal(col, how, fit=fit), [f"{col.name}={lv}" for lv in col.levels]


def _width(col: Column, settings: SpaceSettings, n_classes: int) -> int:
    """Embedded dimensions of one column: 1 if numeric, else one per level (or per class, VDM)."""
    if not col.nominal:
        return 1
    return n_classes if settings.distance == "hvdm" else len(col.levels)


def _check_nominal_size(prepared: list[Column], settings: SpaceSettings, n_classes: int,
                        n_rows: int, memory_mb: int) -> None:
    """Stop before encoding nominal columns whose embedding would not fit the memory setting.

    A nominal column takes one float64 dimension per level (overlap) or per
    class (VDM) on every row.
    """
    dims = {c.name: _width(c, settings, n_classes) for c in prepared if c.nominal}
    need = n_rows * sum(dims.values()) * 8
    if need <= memory_mb * 2**20:
        return
    widest = sorted(dims.items(), key=lambda item: -item[1])[:5]
    raise UsageError(
        f"encoding the nominal columns would take {need / 2**20:,.0f} MB for {n_rows:,} rows, "
        f"more than the memory setting of {memory_mb:,} MB; the widest: "
        + ", ".join(f"{name!r} ({width:,} values)" for name, width in widest),
        hint="leave columns that are ids or free text out ([input] ignore), or raise [run] "
             "memory_mb / --memory-mb" + ("" if settings.distance == "hvdm" else
                                          ", or use distance = \"hvdm\" (one dimension per class)"))


def _fit_mask(fit_rows: np.ndarray | Sequence[int] | None, n: int) -> np.ndarray | None:
    """``fit_rows`` (boolean mask or positions) as a boolean mask, None for every row."""
    if fit_rows is None:
        return None
    rows = np.asarray(fit_rows)
    if rows.dtype == bool:
        if rows.shape != (n,):
            raise UsageError(f"fit_rows is a mask of {rows.size} values for {n} rows",
                             hint="give one True/False per row, or row positions")
        mask = rows.copy()
    else:
        if rows.size and (not np.issubdtype(rows.dtype, np.integer)
                          or rows.min() < 0 or rows.max() >= n):
            raise UsageError(f"fit_rows must be positions from 0 to {n - 1}",
                             hint="give integer row positions, or a boolean mask")
        mask = np.zeros(n, dtype=bool)
        mask[rows.astype(np.int64)] = True
    if not mask.any():
        raise UsageError("fit_rows selects no row: there is nothing to fit the space on",
                         hint="select at least one row")
    return mask


def _class_codes(labels: np.ndarray | None, n: int,
                 fit: np.ndarray | None) -> tuple[np.ndarray | None, np.ndarray]:
    """Class code per row (-1 outside the fit rows) and the class names of the fit rows."""
    if labels is None:
        return None, np.array([])
    if len(labels) != n:
        raise ValueError(f"{len(labels)} labels for {n} rows")
    values = np.asarray(labels)
    # Labels outside the fit rows are never read: they may be anything, even absent (None).
    class_names, codes = encode_labels(values if fit is None else values[fit])
    classes = np.full(n, -1, dtype=np.int64)
    classes[slice(None) if fit is None else fit] = codes.reshape(-1)
    return classes, class_names


def build_space(frame: pl.DataFrame, kinds: dict[str, str], settings: SpaceSettings,
                ids: Sequence[object], engine: EngineSettings | None = None, *,
                labels: np.ndarray | None = None,
                fit_rows: np.ndarray | Sequence[int] | None = None) -> Space:
    """Build the space from the feature columns of ``frame``.

    ``kinds`` maps each feature column to ``float``, ``int``, ``category``,
    ``string`` or ``bool``; its order is the column order of the matrix.
    ``labels`` (one per row) are needed for HVDM and learned weights.
    ``fit_rows`` (boolean mask or positions; every row when None) are the rows
    whose values and labels give every statistic; the other rows are embedded
    with those statistics and their labels are never read.

    Examples
    --------
    >>> f = pl.DataFrame({"a": [0.0, 5.0, 10.0], "b": ["x", "y", "x"]})
    >>> s = build_space(f, {"a": "float", "b": "category"}, SpaceSettings(), [0, 1, 2])
    >>> s.distances([0], [1, 2]).round(4).tolist()
    [[1.118, 1.0]]
    >>> g = pl.DataFrame({"a": [0.0, None, 10.0], "b": ["x", "y", "x"]})
    >>> s = build_space(g, {"a": "float", "b": "category"},
    ...                 SpaceSettings(distance="heom", missing="far"), [0, 1, 2])
    >>> s.metric, s.distances([1], [0, 2]).round(4).tolist()
    ('heom-missing', [[1.4142, 1.4142]])
    >>> s = build_space(f, {"a": "float", "b": "category"}, SpaceSettings(), [0, 1, 2],
    ...                 fit_rows=[0, 1])
    >>> s.matrix[:, 0].tolist()
    [0.0, 1.0, 2.0]
    """
    fit = _fit_mask(fit_rows, frame.height)
    classes, class_names = _class_codes(labels, frame.height, fit)
    if settings.distance == "hvdm" and classes is None:
        raise UsageError("[space] distance = \"hvdm\" needs the labels",
                         hint="pass labels= to build_space")
    prepared = [prepare_column(frame[name], kind in NOMINAL_KINDS, ids, settings.missing, fit)
                for name, kind in kinds.items()]
    _check_nominal_size(prepared, settings, len(class_names), frame.height,
                        (engine or EngineSettings()).memory_mb)
    weights = _resolve_weights(settings, prepared, classes, fit)
    manhattan = settings.distance == "manhattan"
    gaps = np.column_stack([c.gaps for c in prepared]) if prepared else None
    # Filled column by column in place, and each prepared column let go once embedded:
    # no list of blocks plus their stacked copy, no second copy of every value.
    widths = [_width(c, settings, len(class_names)) for c in prepared]
    matrix = np.empty((frame.height, sum(widths)))
    dims, groups, at = [], [], 0
    for g, width in enumerate(widths):
        col = prepared[g]
        block, names_g = _embed(col, settings, classes, class_names, fit)
        w = weights[col.name]
        np.multiply(block, w if manhattan else np.sqrt(w), out=matrix[:, at:at + width])
        prepared[g] = col.released()
        dims.extend(names_g)
        groups.extend([g] * width)
        at += width
    has_gaps = gaps is not None and bool(gaps.any())
    base = "manhattan" if manhattan else "euclidean"
    return Space(np.ascontiguousarray(matrix),
                 f"{settings.distance}-missing" if has_gaps else base, tuple(dims),
                 engine or EngineSettings(), identity=identity_codes(frame, list(kinds)),
                 attributes=tuple(kinds), groups=np.asarray(groups, dtype=np.int64),
                 gaps=gaps if has_gaps else None, weights=weights)


def identity_codes(frame: pl.DataFrame, columns: list[str]) -> np.ndarray:
    """Number the distinct combinations of raw values in ``columns``, in first-seen order.

    Examples
    --------
    >>> identity_codes(pl.DataFrame({"a": [1, 2, 1], "b": ["x", "y", "x"]}), ["a", "b"]).tolist()
    [0, 1, 0]
    """
    if not columns:
        return np.zeros(frame.height, dtype=np.int64)
    codes = (frame.select(columns).with_row_index("__row")
             .with_columns(pl.col("__row").min().over(columns).alias("__first"))
             .select(pl.col("__first").rank("dense") - 1))
    return codes.to_series().to_numpy().astype(np.int64)


@dataclass(frozen=True)
class SpaceModel:
    """A space fitted on some rows, able to embed other rows with the same statistics.

    ``space`` is the space of the fit rows themselves. The model keeps the fit
    rows' feature columns and labels: :meth:`transform` rebuilds on the fit rows
    followed by the new ones, with the fit rows as ``fit_rows``, and returns the
    new rows, whose matrix columns match ``space.columns`` one for one.
    """

    space: Space
    frame: pl.DataFrame
    kinds: dict[str, str]
    settings: SpaceSettings
    ids: tuple[object, ...]
    labels: np.ndarray | None = None

    def transform(self, frame: pl.DataFrame, ids: Sequence[object]) -> Space:
        """Embed the rows of ``frame`` with the statistics of the fit rows.

        Examples
        --------
        >>> model = fit_space(pl.DataFrame({"a": [0.0, 10.0]}), {"a": "float"},
        ...                   SpaceSettings(), [0, 1])
        >>> model.transform(pl.DataFrame({"a": [5.0, 20.0]}), [2, 3]).matrix.ravel().tolist()
        [0.5, 2.0]
        """
        absent = [name for name in self.kinds if name not in frame.columns]
        if absent:
            raise InputError(f"the rows to embed lack feature columns: "
                             f"{', '.join(map(repr, absent))}",
                             hint="give them the columns the space was fitted on")
        n_fit, n_new = self.frame.height, frame.height
        both = pl.concat([self.frame, _plain_columns(frame, self.kinds)], how="vertical")
        labels = None if self.labels is None else np.concatenate(
            [self.labels, np.repeat(self.labels[:1], n_new)])  # never read: not fit rows
        with warnings.catch_warnings():
            # fit_space already warned about constant columns; the same statistics repeat.
            warnings.simplefilter("ignore", ConstantColumnWarning)
            full = build_space(both, self.kinds, self.settings, [*self.ids, *ids],
                               self.space.engine, labels=labels,
                               fit_rows=np.arange(n_fit + n_new) < n_fit)
        new = full.subset(np.arange(n_fit, n_fit + n_new))
        return replace(new, identity=identity_codes(frame, list(self.kinds)))


def _plain_columns(frame: pl.DataFrame, kinds: dict[str, str]) -> pl.DataFrame:
    """The feature columns as String (nominal) or Float64 (numeric), as the space reads them."""
    return frame.select([pl.col(name).cast(pl.String if kind in NOMINAL_KINDS else pl.Float64)
                         for name, kind in kinds.items()])


def fit_space(frame: pl.DataFrame, kinds: dict[str, str], settings: SpaceSettings,
              ids: Sequence[object], engine: EngineSettings | None = None, *,
              labels: np.ndarray | None = None) -> SpaceModel:
    """Fit the space's statistics on the rows of ``frame`` (and their labels).

    Same arguments as :func:`build_space`; ``model.space`` equals
    ``build_space(frame, ...)`` and ``model.transform(other, ids)`` embeds other
    rows without letting them change any statistic.

    Examples
    --------
    >>> train = pl.DataFrame({"a": [0.0, 4.0, 8.0], "b": ["x", "y", "x"]})
    >>> kinds = {"a": "float", "b": "category"}
    >>> model = fit_space(train, kinds, SpaceSettings(distance="heom"), [0, 1, 2])
    >>> test = model.transform(pl.DataFrame({"a": [2.0], "b": ["z"]}), [3])
    >>> test.columns == model.space.columns, test.matrix[0, 0]
    (True, np.float64(0.25))
    """
    if frame.height == 0:
        raise UsageError("fit_space got no rows: there is nothing to fit the space on",
                         hint="fit on a frame with at least one row")
    space = build_space(frame, kinds, settings, ids, engine, labels=labels)
    kept = None if labels is None else np.asarray(labels).copy()
    return SpaceModel(space, _plain_columns(frame, kinds), dict(kinds), settings, tuple(ids),
                      kept)
