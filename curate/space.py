"""Turn a validated table into a matrix in which the chosen distance is plain Lp distance.

``distance`` picks how columns are embedded (see :mod:`curate.mixed`):

* ``"euclidean"`` / ``"manhattan"``: numeric columns scaled by ``scale`` (range to
  [0, 1] by default, or z-score, or robust); nominal columns one-hot, scaled so
  that two different values are at distance 1 (the overlap metric).
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
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

import numpy as np
import polars as pl

from curate.errors import PipelineFileError, UsageError
from curate.mixed import (
    Column,
    ConstantColumnWarning,
    encode_nominal,
    encode_numeric,
    masked_distances,
    mutual_information_weights,
    prepare_column,
)

__all__ = [
    "ConstantColumnWarning",
    "DISTANCES",
    "EngineSettings",
    "LEARNED_WEIGHTS",
    "MISSING_POLICIES",
    "NOMINAL_KINDS",
    "SCALES",
    "Space",
    "SpaceSettings",
    "build_space",
    "identity_codes",
]

NOMINAL_KINDS = ("category", "string", "bool")
DISTANCES = ("euclidean", "manhattan", "heom", "hvdm")
SCALES = ("range", "zscore", "robust")
MISSING_POLICIES = ("stop", "impute", "far")
LEARNED_WEIGHTS = ("mutual-information",)
# Fixed so that learned weights, and so the whole run, repeat exactly.
WEIGHT_SEED = 0


@dataclass(frozen=True)
class EngineSettings:
    """How neighbour queries run: backend name, the memory they may use, and where.

    ``cluster`` is the address of a Dask scheduler (or ``"local:N"``); when set,
    neighbour queries are spread over its workers while a session for that
    address is open (see :mod:`curate.distributed`), with the same results.
    """

    backend: str = "auto"
    memory_mb: int = 1024
    cluster: str | None = None


@dataclass(frozen=True)
class SpaceSettings:
    """The ``[space]`` section of a pipeline file.

    ``weights`` is a mapping column -> weight (columns left out weigh 1) or
    ``"mutual-information"``: weights learned from the labels. ``scale`` applies
    to ``"euclidean"`` and ``"manhattan"`` only; HEOM and HVDM fix their own
    numeric scaling, so with them any scale but the default is rejected.

    Examples
    --------
    >>> SpaceSettings(distance="hvdm", missing="far").distance
    'hvdm'
    """

    scale: str = "range"
    distance: str = "euclidean"
    missing: str = "stop"
    weights: Mapping[str, float] | str = field(default_factory=dict)

    def __post_init__(self) -> None:
        for key, value, allowed in (("scale", self.scale, SCALES),
                                    ("distance", self.distance, DISTANCES),
                                    ("missing", self.missing, MISSING_POLICIES)):
            if value not in allowed:
                raise PipelineFileError(f"[space] {key} = {value!r} is not allowed",
                                        hint=f"use one of {', '.join(map(repr, allowed))}")
        if self.distance in ("heom", "hvdm") and self.scale != "range":
            raise PipelineFileError(
                f"[space] scale = {self.scale!r} contradicts distance = {self.distance!r}, "
                "which fixes its own numeric scaling",
                hint="remove scale, or use distance = \"euclidean\" or \"manhattan\"")
        if isinstance(self.weights, str):
            if self.weights not in LEARNED_WEIGHTS:
                raise PipelineFileError(f"[space] weights = {self.weights!r} is not allowed",
                                        hint="use a table of column = weight, or "
                                             "\"mutual-information\"")
            return
        for column, weight in self.weights.items():
            number = isinstance(weight, int | float) and not isinstance(weight, bool)
            if not number or not np.isfinite(weight) or weight < 0:
                raise PipelineFileError(f"[space] weights: {column!r} = {weight!r} is not a "
                                        "finite number >= 0", hint="give each weight as a "
                                                                   "number such as 2.0")


@dataclass(frozen=True)
class Space:
    """Rows as points: ``matrix`` (n x d, float64) and the ``metric`` between them.

    ``columns`` names the embedded dimensions (``column``, ``column=value`` or,
    for VDM, ``column|class``). ``attributes`` names the input columns,
    ``groups[j]`` the attribute of dimension ``j``, ``gaps`` (or None) the
    ``(n, attributes)`` mask of missing values kept under ``missing = "far"``,
    and ``weights`` the weight applied to each attribute (set or learned).

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
    attributes: tuple[str, ...] = ()
    groups: np.ndarray | None = None
    gaps: np.ndarray | None = None
    weights: dict[str, float] = field(default_factory=dict)

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
        gaps = None if self.gaps is None else self.gaps[pos]
        metric = self.metric
        if gaps is not None and not gaps.any():
            # No gap left among these rows: the fast Lp engines can serve them again.
            gaps, metric = None, "manhattan" if metric.startswith("manhattan") else "euclidean"
        return replace(self, matrix=np.ascontiguousarray(self.matrix[pos]), identity=ident,
                       gaps=gaps, metric=metric)

    def distances(self, a: Sequence[int] | np.ndarray, b: Sequence[int] | np.ndarray) -> np.ndarray:
        """Exact distances between rows ``a`` and rows ``b`` (positions)."""
        a, b = np.asarray(a, dtype=np.int64), np.asarray(b, dtype=np.int64)
        if self.gaps is None or self.groups is None:
            from curate.neighbours import pairwise

            return pairwise(self.matrix[a], self.matrix[b], self.metric)
        cost = np.array([self.weights.get(name, 1.0) for name in self.attributes])
        return masked_distances(self.matrix, self.groups, self.gaps, cost, a, b,
                                manhattan=self.metric.startswith("manhattan"))


def _resolve_weights(settings: SpaceSettings, prepared: list[Column],
                     classes: np.ndarray | None) -> dict[str, float]:
    """Weight per column: learned, or set by hand (default 1)."""
    names = [c.name for c in prepared]
    if isinstance(settings.weights, str):
        if classes is None:
            raise UsageError("[space] weights = \"mutual-information\" needs the labels",
                             hint="pass labels= to build_space")
        learned = mutual_information_weights(prepared, classes, seed=WEIGHT_SEED)
        return dict(zip(names, (float(w) for w in learned), strict=True))
    unknown = sorted(set(settings.weights) - set(names))
    if unknown:
        raise PipelineFileError(f"[space] weights names columns that are not features: "
                                f"{', '.join(map(repr, unknown))}",
                                hint=f"use feature columns: {', '.join(map(repr, names))}")
    return {name: float(settings.weights.get(name, 1.0)) for name in names}


def _embed(col: Column, settings: SpaceSettings, classes: np.ndarray | None,
           class_names: np.ndarray) -> tuple[np.ndarray, list[str]]:
    """Embedded block and dimension names of one prepared column."""
    distance = settings.distance
    if not col.nominal:
        scale = {"heom": "range", "hvdm": "4sd"}.get(distance, settings.scale)
        return encode_numeric(col, scale), [col.name]
    if distance == "hvdm":
        return (encode_nominal(col, "vdm", classes, len(class_names)),
                [f"{col.name}|{c}" for c in class_names])
    how = "overlap-l1" if distance == "manhattan" else "overlap"
    return encode_nominal(col, how), [f"{col.name}={lv}" for lv in col.levels]


def build_space(frame: pl.DataFrame, kinds: dict[str, str], settings: SpaceSettings,
                ids: Sequence[object], engine: EngineSettings | None = None, *,
                labels: np.ndarray | None = None) -> Space:
    """Build the space from the feature columns of ``frame``.

    ``kinds`` maps each feature column to ``float``, ``int``, ``category``,
    ``string`` or ``bool``; its order is the column order of the matrix.
    ``labels`` (one per row) are needed for HVDM and learned weights.

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
    """
    classes, class_names = None, np.array([])
    if labels is not None:
        if len(labels) != frame.height:
            raise ValueError(f"{len(labels)} labels for {frame.height} rows")
        class_names, codes = np.unique(np.asarray(labels), return_inverse=True)
        classes = codes.reshape(-1).astype(np.int64)
    if settings.distance == "hvdm" and classes is None:
        raise UsageError("[space] distance = \"hvdm\" needs the labels",
                         hint="pass labels= to build_space")
    prepared = [prepare_column(frame[name], kind in NOMINAL_KINDS, ids, settings.missing)
                for name, kind in kinds.items()]
    weights = _resolve_weights(settings, prepared, classes)
    manhattan = settings.distance == "manhattan"
    blocks, dims, groups = [], [], []
    for g, col in enumerate(prepared):
        block, names_g = _embed(col, settings, classes, class_names)
        w = weights[col.name]
        blocks.append(block * (w if manhattan else np.sqrt(w)))
        dims.extend(names_g)
        groups.extend([g] * block.shape[1])
    matrix = np.hstack(blocks) if blocks else np.zeros((frame.height, 0))
    gaps = np.column_stack([c.gaps for c in prepared]) if prepared else None
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
