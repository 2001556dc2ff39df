"""One run in memory: the prepared input, each stage's outcome, and the run's result."""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

import numpy as np
import polars as pl

from curate.io.task import TaskChoice
from curate.methods.base import Selection
from curate.pipeline.audit import suggestions_like
from curate.settings import Spec, StageSettings
from curate.space.points import Space

__all__ = ["Prepared", "RunResult", "StageOutcome"]


SUGGESTED = "suggested_label"  # the column a relabelling stage adds to kept.parquet

@dataclass
class Prepared:
    """The checked input, ready for stages: the table, ids, valid rows and their space.

    ``space_labels`` holds the target of each valid row: class labels, or for a
    regression ``task`` the numeric targets as float64.
    """

    spec: Spec
    frame: pl.DataFrame
    ids: pl.Series
    labels: pl.Series
    valid: np.ndarray
    failures: pl.DataFrame
    features: list[str]
    kinds: dict[str, str]
    space: Space
    space_labels: np.ndarray
    protected: np.ndarray
    checked: pl.DataFrame
    task: TaskChoice = TaskChoice("classification", "the default")
    fit: np.ndarray | None = None

    @property
    def valid_positions(self) -> np.ndarray:
        """Input positions of the rows that passed the schema, in input order."""
        return np.flatnonzero(self.valid)


@dataclass
class RunResult:
    """What a run produced: the audit, the summary, and which input rows were kept.

    ``kept`` and ``removed`` (the input's columns, untouched, plus ``row_id``
    and score columns) are built from the input on first use only: a run that
    just writes its folder streams them from the input in batches instead (see
    :func:`curate.io.batches.write_rows`), so that no whole copy of the input
    exists at the end of the run.

    ``spared`` records what stages would have removed of the protected rows;
    ``flagged`` (when a label-noise stage ran) records the rows such a stage
    flagged but kept (``action`` relabel or report), with an ``action`` column;
    ``relabel`` holds, per input position, the label a relabelling stage
    suggests (None elsewhere), written as the ``suggested_label`` column.
    """

    audit: pl.DataFrame
    summary: dict[str, Any]
    prepared: Prepared
    kept_positions: np.ndarray
    scores: dict[str, np.ndarray] = field(default_factory=dict)
    spared: pl.DataFrame | None = None
    flagged: pl.DataFrame | None = None
    relabel: np.ndarray | None = None
    outcomes: list[StageOutcome] = field(default_factory=list)

    @property
    def kept_mask(self) -> np.ndarray:
        """True at the input positions of the kept rows."""
        mask = np.zeros(self.prepared.frame.height, dtype=bool)
        mask[self.kept_positions] = True
        return mask

    def rows_frame(self) -> pl.DataFrame:
        """The input with ``row_id`` and the score columns: kept and removed rows come from it."""
        prep = self.prepared
        base = prep.frame.with_columns(prep.ids) if prep.spec.input.id != "row_id" else prep.frame
        if prep.spec.output.scores:
            base = base.with_columns([pl.Series(name, values) for name, values
                                      in self.scores.items() if name not in base.columns])
        if self.relabel is not None:
            base = base.with_columns(suggestions_like(list(self.relabel), prep.labels.dtype)
                                     .alias(SUGGESTED))
        return base

    @cached_property
    def kept(self) -> pl.DataFrame:
        """The kept rows, in input order."""
        return self.rows_frame().filter(pl.Series(self.kept_mask))

    @cached_property
    def removed(self) -> pl.DataFrame:
        """The removed rows (quarantined ones included), in input order."""
        return self.rows_frame().filter(~pl.Series(self.kept_mask))


@dataclass
class StageOutcome:
    """One stage's facts for the summary; ``rows`` are the input positions of the rows that
    reached it, ``lists`` the whole-stage neighbour lists its method searched, if any."""

    stage: StageSettings
    rows_in: int
    labels_in: np.ndarray
    selection: Selection
    removed_input: np.ndarray
    seconds: float
    rows: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    lists: tuple[np.ndarray, np.ndarray] | None = None
