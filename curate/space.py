"""Turn a validated table into a matrix in which the chosen distance is plain Lp distance.

Numeric columns are scaled (range to [0, 1] by default, or z-score, or robust);
nominal columns become scaled one-hot vectors so that two different values are
at distance 1 (the overlap metric) under both Euclidean and Manhattan distance.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from dataclasses import dataclass, field, replace

import numpy as np
import polars as pl

from curate.errors import InputError, first_ids

__all__ = ["EngineSettings", "Space", "SpaceSettings", "build_space", "NOMINAL_KINDS"]

NOMINAL_KINDS = ("category", "string", "bool")


@dataclass(frozen=True)
class EngineSettings:
    """How neighbour queries run: backend name and the memory they may use."""

    backend: str = "auto"
    memory_mb: int = 1024


@dataclass(frozen=True)
class SpaceSettings:
    """The ``[space]`` section of a pipeline file."""

    scale: str = "range"
    distance: str = "euclidean"
    missing: str = "stop"
    weights: dict[str, float] = field(default_factory=dict)


class ConstantColumnWarning(UserWarning):
    """A feature column has one value only and contributes nothing to distances."""


@dataclass(frozen=True)
class Space:
    """Rows as points: ``matrix`` (n x d, float64) and the ``metric`` between them.

    ``columns`` names the embedded dimensions (``column`` or ``column=value``).
    ``positions`` maps rows back to positions in the space this one was cut from.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0, 0.0], [3.0, 4.0]])
    >>> s.distances([0], [1]).tolist()
    [[5.0]]
    >>> s.subset([1]).n
    1
    """

    matrix: np.ndarray
    metric: str = "euclidean"
    columns: tuple[str, ...] = ()
    engine: EngineSettings = EngineSettings()
    identity: np.ndarray | None = None

    def identity_codes(self) -> np.ndarray:
        """One integer per row, equal exactly when the rows' raw feature values are equal.

        Built from the input values when the space came from a table (so that
        scaling cannot merge two close values), else from the matrix rows.
        """
        if self.identity is not None:
            return self.identity
        _, codes = np.unique(self.matrix, axis=0, return_inverse=True)
        return np.asarray(codes, dtype=np.int64).reshape(-1)

    @classmethod
    def from_matrix(cls, matrix: Sequence[Sequence[float]] | np.ndarray,
                    metric: str = "euclidean", engine: EngineSettings | None = None) -> Space:
        """Wrap a ready numeric matrix (already scaled) as a space."""
        m = np.ascontiguousarray(np.asarray(matrix, dtype=np.float64))
        if m.ndim != 2:
            raise ValueError("a space needs a two-dimensional matrix")
        cols = tuple(f"x{j}" for j in range(m.shape[1]))
        return cls(m, metric, cols, engine or EngineSettings())

    @property
    def n(self) -> int:
        """Number of rows."""
        return int(self.matrix.shape[0])

    def subset(self, positions: Sequence[int] | np.ndarray) -> Space:
        """Return the space of the given rows, in the given order."""
        pos = np.asarray(positions, dtype=np.int64)
        ident = None if self.identity is None else self.identity[pos]
        return replace(self, matrix=np.ascontiguousarray(self.matrix[pos]), identity=ident)

    def distances(self, a: Sequence[int] | np.ndarray, b: Sequence[int] | np.ndarray) -> np.ndarray:
        """Exact distances between rows ``a`` and rows ``b`` (positions)."""
        from curate.neighbours import pairwise

        return pairwise(self.matrix[np.asarray(a)], self.matrix[np.asarray(b)], self.metric)


def _numeric_block(col: pl.Series, scale: str, name: str) -> np.ndarray:
    values = col.cast(pl.Float64).to_numpy().astype(np.float64)
    finite = values[np.isfinite(values)]
    if len(finite) == 0:
        return np.zeros_like(values)
    if scale == "range":
        low, span = finite.min(), finite.max() - finite.min()
    elif scale == "zscore":
        low, span = finite.mean(), finite.std()
    else:  # robust
        q1, median, q3 = np.percentile(finite, [25, 50, 75])
        low, span = median, q3 - q1
    if span == 0 or not np.isfinite(span):
        warnings.warn(f"column {name!r} is constant; it contributes nothing to distances",
                      ConstantColumnWarning, stacklevel=3)
        return np.zeros_like(values)
    return (values - low) / span


def _nominal_block(col: pl.Series, metric: str, name: str) -> tuple[np.ndarray, list[str]]:
    text = col.cast(pl.String).fill_null("<missing>")
    levels = sorted(text.unique().to_list())
    if len(levels) == 1:
        warnings.warn(f"column {name!r} is constant; it contributes nothing to distances",
                      ConstantColumnWarning, stacklevel=3)
    codes = text.to_frame().with_columns(
        pl.col(text.name).replace_strict(levels, list(range(len(levels))), return_dtype=pl.Int64)
    ).to_series().to_numpy()
    # Two different one-hot rows differ in two places: scale so that distance is 1.
    value = 1 / np.sqrt(2) if metric == "euclidean" else 0.5
    block = np.zeros((len(codes), len(levels)), dtype=np.float64)
    block[np.arange(len(codes)), codes] = value
    return block, [f"{name}={lv}" for lv in levels]


def _check_finite(frame: pl.DataFrame, numeric: list[str], ids: Sequence[object], missing: str) -> None:
    for name in numeric:
        values = frame[name].cast(pl.Float64)
        bad_null = values.is_null().to_numpy()
        bad_nan = values.is_nan().fill_null(False).to_numpy()
        bad_inf = values.is_infinite().fill_null(False).to_numpy()
        if bad_inf.any():
            rows = [ids[i] for i in np.flatnonzero(bad_inf)]
            raise InputError(f"column {name!r} has infinite values in {first_ids(rows)}",
                             hint="fix or remove those rows, or add a max/min rule and "
                                  "on_invalid = \"quarantine\" in [input]")
        if missing == "stop" and (bad_null | bad_nan).any():
            rows = [ids[i] for i in np.flatnonzero(bad_null | bad_nan)]
            raise InputError(f"column {name!r} has missing or NaN values in {first_ids(rows)}",
                             hint="set [space] missing = \"impute\" (median) or fill the gaps "
                                  "in the input")


def build_space(frame: pl.DataFrame, kinds: dict[str, str], settings: SpaceSettings,
                ids: Sequence[object], engine: EngineSettings | None = None) -> Space:
    """Build the space from the feature columns of ``frame``.

    ``kinds`` maps each feature column to ``float``, ``int``, ``category``,
    ``string`` or ``bool``; its order is the column order of the matrix.

    Examples
    --------
    >>> f = pl.DataFrame({"a": [0.0, 5.0, 10.0], "b": ["x", "y", "x"]})
    >>> s = build_space(f, {"a": "float", "b": "category"}, SpaceSettings(), [0, 1, 2])
    >>> s.distances([0], [1, 2]).round(4).tolist()
    [[1.118, 1.0]]
    """
    numeric = [c for c, k in kinds.items() if k not in NOMINAL_KINDS]
    _check_finite(frame, numeric, ids, settings.missing)
    blocks: list[np.ndarray] = []
    names: list[str] = []
    for name, kind in kinds.items():
        weight = float(settings.weights.get(name, 1.0))
        if kind in NOMINAL_KINDS:
            block, labels = _nominal_block(frame[name], settings.distance, name)
        else:
            block = _numeric_block(frame[name], settings.scale, name)[:, None]
            labels = [name]
            gaps = ~np.isfinite(block[:, 0])
            if gaps.any():  # only reachable with missing = "impute"
                block[gaps, 0] = np.median(block[~gaps, 0]) if (~gaps).any() else 0.0
        if weight != 1.0:
            block = block * (weight if settings.distance == "manhattan" else np.sqrt(weight))
        blocks.append(block)
        names.extend(labels)
    matrix = np.hstack(blocks) if blocks else np.zeros((frame.height, 0))
    return Space(np.ascontiguousarray(matrix), settings.distance, tuple(names),
                 engine or EngineSettings(), identity=identity_codes(frame, list(kinds)))


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
