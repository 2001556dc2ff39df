"""The records of an update's stage: what the run did in it, what reaches it now, and
what the update decided; and the plain full rerun every family falls back to."""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

import numpy as np
import polars as pl

from curate.methods import method_for
from curate.methods.base import Selection
from curate.neighbours.lists import sharing_lists
from curate.pipeline.records import Prepared
from curate.pipeline.stage import run_stage
from curate.settings import StageSettings

__all__ = ["Listed", "OldStage", "StageInput", "StageUpdate", "among", "full_rerun",
           "old_fate"]


@dataclass(frozen=True)
class OldStage:
    """What the old run did in one stage, in input positions of the update's input.

    ``records`` holds the stage's audit rows with their input ``position``
    (and ``kept_position`` for kept_as); ``lists`` the kept neighbour lists;
    ``metric`` the distance the stage's rows were measured with.
    """

    rows: np.ndarray
    removed: np.ndarray
    records: pl.DataFrame
    lists: tuple[np.ndarray, np.ndarray] | None
    info: dict[str, Any]
    protected: np.ndarray
    metric: str


@dataclass(frozen=True)
class Listed:
    """An earlier stage's neighbour lists, brought up to date: ``rows`` (input positions,
    ascending), ``dist`` and ``nbr`` (input positions). Its rows include every row that
    reaches a later stage, so a list's first row in any subset of them is that subset's
    nearest (ties by position, as in the list)."""

    rows: np.ndarray
    dist: np.ndarray
    nbr: np.ndarray


@dataclass(frozen=True)
class StageInput:
    """One stage as the update meets it: settings, the rows reaching it and the old stage."""

    prep: Prepared
    stage: StageSettings
    active: np.ndarray
    old: OldStage
    seed: int
    earlier: Listed | None = None

    @cached_property
    def rows(self) -> np.ndarray:
        """Input positions of the rows reaching the stage, ascending."""
        return self.prep.valid_positions[self.active]

    @cached_property
    def labels(self) -> np.ndarray:
        """Their labels."""
        return self.prep.space_labels[self.active]

    @cached_property
    def protected(self) -> np.ndarray:
        """Stage positions of the protected rows."""
        return np.flatnonzero(among(self.active, np.sort(self.prep.protected)))

    @cached_property
    def was_there(self) -> np.ndarray:
        """Per stage row: whether it reached the old stage."""
        return among(self.rows, self.old.rows)

    @cached_property
    def was_removed(self) -> np.ndarray:
        """Per stage row: whether the old stage removed it."""
        return among(self.rows, self.old.removed)

    def entering(self) -> np.ndarray:
        """Stage positions of rows that did not reach the old stage."""
        return np.flatnonzero(~self.was_there)

    def leaving(self) -> np.ndarray:
        """Input positions of rows that reached the old stage and no longer reach it."""
        return self.old.rows[~among(self.old.rows, self.rows)]


def among(values: np.ndarray, members: np.ndarray) -> np.ndarray:
    """Per value, whether it is in ``members``: ``np.isin`` for input positions (integers
    from 0), by a mask over the positions, which is linear (``np.isin`` sorts or hashes, and
    took seconds on a million positions).

    Examples
    --------
    >>> among(np.array([5, 1, 9]), np.array([1, 2, 9])).tolist()
    [False, True, True]
    >>> among(np.array([-1, 2]), np.array([2])).tolist()
    [False, True]
    """
    if len(values) == 0 or len(members) == 0:
        return np.zeros(len(values), dtype=bool)
    low, top = min(values.min(), members.min()), int(max(values.max(), members.max()))
    if low < 0 or top > 8 * (len(values) + len(members)) + 1024:
        ordered = np.sort(members)  # values far apart (group keys, -1 for none): bisection
        at = np.minimum(np.searchsorted(ordered, values), len(ordered) - 1)
        return ordered[at] == values
    mask = np.zeros(top + 1, dtype=bool)
    mask[members] = True
    return mask[values]


@dataclass
class StageUpdate:
    """A stage's new result: ``kept`` (stage positions), new records in ``selection`` and
    the old records kept as they were (``copied``, input positions)."""

    kept: np.ndarray
    selection: Selection
    copied: np.ndarray
    report: dict[str, Any]
    lists: tuple[np.ndarray, np.ndarray] | None = None
    exact: bool = True
    scores: dict[str, np.ndarray] = field(default_factory=dict)


def old_fate(inp: StageInput, kept: np.ndarray) -> dict[str, int]:
    """How the update moved old rows: removed now though kept before, and restored."""
    now_kept = np.zeros(len(inp.rows), dtype=bool)
    now_kept[kept] = True
    old_row, was_removed = inp.was_there, inp.was_removed
    return {"old_rows_removed_now": int((old_row & ~was_removed & ~now_kept).sum()),
            "old_rows_restored": int((old_row & was_removed & now_kept).sum())}


def full_rerun(inp: StageInput, why: str) -> StageUpdate:
    """Run the stage again on all its rows: the same result as a full run, by definition."""
    sub = inp.prep.space.subset(inp.active)
    with sharing_lists(sub.matrix) as kept:
        sel = run_stage(inp.stage, sub, inp.labels, inp.protected, inp.seed,
                        inp.prep.task.task)
    lists = kept.pair() if method_for(inp.stage.method, inp.prep.task.task).judged_by_lists \
        else None
    report = {"mode": "full rerun", "why": why, "old_rows_rejudged": int(inp.was_there.sum()),
              **old_fate(inp, sel.kept)}
    return StageUpdate(sel.kept, sel, np.zeros(0, dtype=np.int64), report, lists,
                       scores=sel.scores)
