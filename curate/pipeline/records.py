"""One run in memory: the prepared input, each stage's outcome, and the run's result."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import polars as pl

from curate.methods.base import Selection
from curate.settings import Spec, StageSettings
from curate.space.points import Space

__all__ = ["Prepared", "RunResult", "StageOutcome"]


@dataclass
class Prepared:
    """The checked input, ready for stages: the table, ids, valid rows and their space."""

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

    @property
    def valid_positions(self) -> np.ndarray:
        """Input positions of the rows that passed the schema, in input order."""
        return np.flatnonzero(self.valid)


@dataclass
class RunResult:
    """What a run produced: kept, removed and audit tables and the summary.

    ``spared`` records what stages would have removed of the protected rows;
    ``flagged`` (when a label-noise stage ran) records the rows such a stage
    flagged but kept (``action`` relabel or report), with an ``action`` column.
    """

    kept: pl.DataFrame
    removed: pl.DataFrame
    audit: pl.DataFrame
    summary: dict[str, Any]
    prepared: Prepared
    kept_positions: np.ndarray
    scores: dict[str, np.ndarray] = field(default_factory=dict)
    spared: pl.DataFrame | None = None
    flagged: pl.DataFrame | None = None


@dataclass
class StageOutcome:
    """One stage's facts for the summary."""

    stage: StageSettings
    rows_in: int
    labels_in: np.ndarray
    selection: Selection
    removed_input: np.ndarray
    seconds: float
