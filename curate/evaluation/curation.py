"""The stages of a pipeline on one fold's training rows, as a run would run them."""

from __future__ import annotations

from typing import Any

import numpy as np

from curate.pipeline.records import Prepared
from curate.pipeline.stage import run_step
from curate.space.points import Space

__all__ = ["curate_fold"]


def curate_fold(prep: Prepared, space: Space, labels: np.ndarray, ids: list[Any],
                protected: np.ndarray) -> tuple[np.ndarray, list[np.ndarray], list[str]]:
    """Run the stages on one fold's training rows through the run's own stage step.

    Returns the kept rows, each stage's removals and the stages that went over
    their ``max_removed_share``. A run stops there; an evaluation only
    measures, so it goes on and reports the breach.
    """
    spec = prep.spec
    active = np.arange(space.n)
    removed: list[np.ndarray] = []
    over: list[str] = []
    for stage in spec.stages:
        step = run_step(stage, space.subset(active), labels[active],
                        np.flatnonzero(np.isin(active, protected)), spec.run.seed,
                        [ids[a] for a in active], prep.task.task)
        if step.over_limit is not None:
            over.append(stage.name)
        removed.append(active[step.selection.removed])
        active = active[step.selection.kept]
    return np.sort(active), removed, over
