"""One stage step, the same for a run, for `curate evaluate` and for the Sampler.

:func:`run_step` runs the stage's method on the rows still kept (on the
cluster when the space names one), records which neighbour backends it used,
checks that kept and removed rows partition its input and reports, without
raising, whether it went over its ``max_removed_share``: a run stops there, an
evaluation counts it and goes on.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from curate.cluster.stage import run_on_cluster
from curate.errors import SafetyLimitError, UsageError, first_ids
from curate.methods import METHODS
from curate.methods.base import Selection
from curate.neighbours.calls import recording, summarise_calls
from curate.neighbours.search import require_neighbours
from curate.settings import StageSettings
from curate.space.points import Space

__all__ = ["Step", "check_folds", "check_k", "removable_rows", "run_stage", "run_step", "safety_breach",
           "verify_partition"]


def removable_rows(stage: StageSettings, labels: np.ndarray, protected: np.ndarray) -> np.ndarray:
    """Rows the stage may remove: of the classes it names, and not protected."""
    text = labels.astype(str)
    if stage.classes == "all":
        mask = np.ones(len(labels), dtype=bool)
    elif stage.classes == "all-but-smallest":
        values, counts = np.unique(text, return_counts=True)
        smallest = values[np.lexsort((values, counts))[0]] if len(values) > 1 else None
        mask = text != smallest
    else:
        wanted = [str(c) for c in stage.classes]
        unknown = sorted(set(wanted) - set(text))
        if unknown:
            raise UsageError(f"stage {stage.name!r}: classes {unknown} do not occur in its input",
                             hint=f"use labels that occur: {', '.join(sorted(set(text))[:10])}")
        mask = np.isin(text, wanted)
    mask[protected] = False
    return mask


def check_folds(stage: StageSettings, labels: np.ndarray) -> None:
    """Stop before a cross-validating stage runs when a class has fewer rows than ``folds``."""
    folds = stage.params.get("folds")
    if not isinstance(folds, int) or isinstance(folds, bool) or len(labels) == 0:
        return
    values, counts = np.unique(labels.astype(str), return_counts=True)
    if len(values) > 1 and counts.min() < folds:
        small = values[np.argmin(counts)]
        raise UsageError(f"stage {stage.name!r}: folds = {folds}, but class {str(small)!r} has "
                         f"only {counts.min()} rows in its input; each fold needs a row of "
                         "every class",
                         hint=f"lower folds to {counts.min()}" if counts.min() >= 2 else
                         "a class of one row cannot be cross-validated: fix or drop that row "
                         "first")


def check_k(stage: StageSettings, labels: np.ndarray, removable: np.ndarray) -> None:
    """Stop before the stage runs when its ``k`` does not fit the rows (and classes) it gets."""
    k = stage.params.get("k")
    if not isinstance(k, int):
        return
    require_neighbours(k, len(labels), where=f"stage {stage.name!r}: ")
    values, counts = np.unique(labels[removable].astype(str), return_counts=True)
    sizes = dict(zip(*np.unique(labels.astype(str), return_counts=True), strict=True))
    small = [str(v) for v in values if sizes[v] <= k]
    if small and METHODS[stage.method].compares_classes:
        raise UsageError(f"stage {stage.name!r}: k = {k} is not below the size of class "
                         f"{small[0]!r} ({sizes[small[0]]} rows), so its rows cannot outvote "
                         "their neighbours",
                         hint=f"lower k below {sizes[small[0]]}, or keep that class out of reach "
                              "with classes = \"all-but-smallest\" or a list of classes")


def safety_breach(stage: StageSettings, labels: np.ndarray, removed_local: np.ndarray,
                  ids: list[Any], verb: str = "remove") -> SafetyLimitError | None:
    """The error a run stops with when the stage removes (or relabels) too much of a class,
    else None."""
    if stage.max_removed_share >= 1.0 or len(removed_local) == 0:
        return None
    values, entering = np.unique(labels.astype(str), return_counts=True)
    leaving = dict(zip(*np.unique(labels[removed_local].astype(str), return_counts=True),
                       strict=True))
    for value, total in zip(values.tolist(), entering, strict=True):
        share = leaving.get(value, 0) / total
        if share > stage.max_removed_share:
            rows = [ids[i] for i in removed_local if str(labels[i]) == value]
            return SafetyLimitError(
                f"stage {stage.name!r} ({stage.method}) would {verb} {leaving[value]} of "
                f"{total} rows of class {value!r} ({share:.0%}), over its limit "
                f"max_removed_share = {stage.max_removed_share}; {first_ids(rows)}",
                hint="review why (lower k, classes = \"all-but-smallest\"), or raise "
                     "max_removed_share for this stage if that share is expected "
                     "(condensing stages usually remove most rows)")
    return None


def run_stage(stage: StageSettings, space: Space, labels: np.ndarray, protected: np.ndarray,
              seed: int) -> Selection:
    """Run one stage's method on ``space`` (rows still kept) and return its selection."""
    info = METHODS[stage.method]
    removable = removable_rows(stage, labels, protected)
    if info.uses_neighbours:
        check_k(stage, labels, removable)
    check_folds(stage, labels)
    stage_seed = stage.seed if stage.seed is not None else seed
    if space.engine.cluster_address is not None:
        return run_on_cluster(info, space, labels, removable=removable, seed=stage_seed,
                              params=stage.params)
    return info.func(space, labels, removable=removable, seed=stage_seed, **dict(stage.params))


def verify_partition(sel: Selection, n: int, stage: StageSettings) -> None:
    """The contract every method keeps: kept and removed positions partition its input."""
    together = np.concatenate([sel.kept, sel.removed])
    if len(together) != n or not np.array_equal(np.sort(together), np.arange(n)):
        raise AssertionError(f"stage {stage.name!r}: kept and removed rows do not partition "
                             "its input")


@dataclass
class Step:
    """One stage's selection (positions local to its space), and the safety limit it broke."""

    selection: Selection
    over_limit: SafetyLimitError | None


def run_step(stage: StageSettings, space: Space, labels: np.ndarray, protected: np.ndarray,
             seed: int, ids: list[Any]) -> Step:
    """Run one stage on ``space`` (the rows still kept; ``ids`` theirs, for messages).

    Examples
    --------
    >>> from curate.settings import StageSettings
    >>> s = Space.from_matrix([[0.0], [1.0], [2.0], [50.0], [51.0], [52.0], [3.0]])
    >>> y = np.array(["a", "a", "a", "b", "b", "b", "b"])
    >>> step = run_step(StageSettings("e", "enn", {"k": 1, "vote": "majority"}), s, y,
    ...                 np.zeros(0, dtype=np.int64), 0, list(range(7)))
    >>> step.selection.removed.tolist(), step.over_limit is None
    ([6], True)
    """
    with recording() as calls:
        sel = run_stage(stage, space, labels, protected, seed)
    if calls:
        sel.info["engine"] = summarise_calls(calls)
    verify_partition(sel, space.n, stage)
    if sel.action == "relabel" and sel.flagged is not None:
        # Relabelling half a class is as suspect as removing it: the same limit holds.
        return Step(sel, safety_breach(stage, labels, sel.flagged.removed, ids, "relabel"))
    return Step(sel, safety_breach(stage, labels, sel.removed, ids))
