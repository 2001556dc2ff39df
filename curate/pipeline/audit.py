"""The audit log: one row per removed input row, in input-row terms, and its own schema.

Methods record removals in positions local to their stage
(:class:`curate.methods.base.SelectionBuilder`); the run maps them to input
rows and appends them here, stage after stage. Plain-word explanations of a
written audit (`curate why`) are in :mod:`curate.io.explain`.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandera.polars as pa
import polars as pl

__all__ = ["AUDIT_COLUMNS", "AuditLog", "audit_schema", "suggestions_like"]

AUDIT_COLUMNS = ("row_id", "stage", "method", "reason", "detail", "label", "neighbour_ids",
                 "neighbour_labels", "neighbour_distances", "kept_as", "step", "suggested_label")


def audit_schema(unique_ids: bool = True) -> pa.DataFrameSchema:
    """The pandera schema every audit table is checked against before it is written.

    ``unique_ids`` is false for the record of protected rows, which several
    stages may each have wanted to remove.
    """
    return pa.DataFrameSchema(
        {
            "row_id": pa.Column(None, nullable=False, unique=unique_ids),
            "stage": pa.Column(pl.String, nullable=False),
            "method": pa.Column(pl.String, nullable=False),
            "reason": pa.Column(pl.String, nullable=False, checks=pa.Check.str_length(min_value=1)),
            "detail": pa.Column(pl.String, nullable=False, checks=pa.Check.str_length(min_value=1)),
            "label": pa.Column(None, nullable=True),
            "neighbour_ids": pa.Column(None, nullable=False),
            "neighbour_labels": pa.Column(None, nullable=False),
            "neighbour_distances": pa.Column(pl.List(pl.Float64), nullable=False),
            "kept_as": pa.Column(None, nullable=True),
            "step": pa.Column(pl.Int64, nullable=False, checks=pa.Check.ge(0)),
            "suggested_label": pa.Column(None, nullable=True),
        },
        strict=True,
        ordered=True,
    )


class AuditLog:
    """Collects the run's removal records, in input-row terms, stage after stage, and
    builds the audit table.

    ``ids`` and ``labels`` are the input's row ids and label values by input
    position; records refer to input positions.
    """

    def __init__(self, ids: pl.Series, labels: pl.Series) -> None:
        self.ids = ids
        self.labels = labels
        self._parts: list[pl.DataFrame] = []

    def add(self, *, stage: str, method: str, positions: np.ndarray, reason: Sequence[str],
            detail: Sequence[str], neighbours: Sequence[np.ndarray],
            distances: Sequence[np.ndarray], kept_as: np.ndarray, step: np.ndarray,
            suggested: Sequence[object] | None = None) -> None:
        """Append the records of one stage (positions are input positions; -1 in kept_as = none;
        ``suggested``: the label a label-noise method suggests for each row, None where none)."""
        if len(positions) == 0:
            return
        lengths = np.array([len(n) for n in neighbours], dtype=np.int64)
        flat = np.concatenate(neighbours).astype(np.int64) if lengths.sum() else np.zeros(0, np.int64)
        flat_dist = (np.concatenate([np.asarray(d, dtype=np.float64) for d in distances])
                     if lengths.sum() else np.zeros(0))
        kept = pl.Series(kept_as, dtype=pl.Int64)
        kept_ids = self.ids.gather(kept.clip(lower_bound=0)).to_frame("k").with_columns(
            pl.when(kept < 0).then(None).otherwise(pl.col("k")).alias("k"))["k"]
        self._parts.append(pl.DataFrame({
            "row_id": self.ids.gather(positions),
            "stage": pl.Series([stage] * len(positions), dtype=pl.String),
            "method": pl.Series([method] * len(positions), dtype=pl.String),
            "reason": pl.Series(list(reason), dtype=pl.String),
            "detail": pl.Series(list(detail), dtype=pl.String),
            "label": self.labels.gather(positions),
            "neighbour_ids": _nest(self.ids.gather(flat), lengths),
            "neighbour_labels": _nest(self.labels.gather(flat), lengths),
            "neighbour_distances": _nest(pl.Series(flat_dist, dtype=pl.Float64), lengths),
            "kept_as": kept_ids,
            "step": pl.Series(np.asarray(step, dtype=np.int64), dtype=pl.Int64),
            "suggested_label": self._labels_like(suggested, len(positions)),
        }))

    def _labels_like(self, values: Sequence[object] | None, n: int) -> pl.Series:
        """Suggested labels in the label column's own type (null where none)."""
        if values is None:
            return pl.Series([None] * n, dtype=self.labels.dtype)
        return suggestions_like(values, self.labels.dtype)

    def frame(self, unique_ids: bool = True) -> pl.DataFrame:
        """The audit table, checked against :func:`audit_schema`."""
        if self._parts:
            table = pl.concat(self._parts, how="vertical")
        else:
            table = pl.DataFrame({
                "row_id": self.ids.clear(), "stage": [], "method": [], "reason": [], "detail": [],
                "label": self.labels.clear(),
                "neighbour_ids": pl.Series([], dtype=pl.List(self.ids.dtype)),
                "neighbour_labels": pl.Series([], dtype=pl.List(self.labels.dtype)),
                "neighbour_distances": pl.Series([], dtype=pl.List(pl.Float64)),
                "kept_as": self.ids.clear(), "step": pl.Series([], dtype=pl.Int64),
                "suggested_label": self.labels.clear()},
                schema_overrides={"stage": pl.String, "method": pl.String, "reason": pl.String,
                                  "detail": pl.String})
        return audit_schema(unique_ids).validate(table)


def suggestions_like(values: Sequence[object], dtype: pl.DataType) -> pl.Series:
    """Suggested labels (or target values) in the label column's type, null where none.

    A suggested value for a whole-number target is rounded to the nearest
    whole number, never cut off.

    Examples
    --------
    >>> suggestions_like([None, 13.7, 2.2], pl.Int64).to_list()
    [None, 14, 2]
    >>> suggestions_like([None, "a"], pl.String).to_list()
    [None, 'a']
    """
    items = list(values)
    if dtype.is_integer():
        items = [None if v is None else round(float(v)) for v in items]  # type: ignore[arg-type]
    return pl.Series(items, dtype=dtype, strict=False)


def _nest(values: pl.Series, lengths: np.ndarray) -> pl.Series:
    """Cut ``values`` into consecutive lists of the given lengths (empty lists allowed)."""
    owner = np.repeat(np.arange(len(lengths), dtype=np.int64), lengths)
    grouped = (pl.DataFrame({"owner": owner, "v": values})
               .group_by("owner").agg(pl.col("v")))
    full = pl.DataFrame({"owner": np.arange(len(lengths), dtype=np.int64)}).join(
        grouped, on="owner", how="left", maintain_order="left")
    return full["v"].fill_null(pl.lit([], dtype=pl.List(values.dtype))).alias("v")
