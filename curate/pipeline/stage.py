"""One stage step, the same for a run, for `curate evaluate` and for the Sampler.

:func:`run_step` runs the stage's method on the rows still kept (on the
cluster when the space names one), records which neighbour backends it used,
checks that kept and removed rows partition its input and reports, without
raising, whether it went over its ``max_removed_share``: a run stops there, an
evaluation counts it and goes on.

``task`` picks the method's table (:func:`curate.methods.method_for`). On a
regression table ``labels`` are the numeric targets: there are no classes, so
``classes`` must be "all", ``k`` is checked against the rows only, and
``max_removed_share`` bounds the share of all the rows the stage gets.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from curate.cluster.stage import run_on_cluster
from curate.errors import SafetyLimitError, UsageError, counted, first_ids, quoted
from curate.methods import method_for
from curate.methods.base import Selection
from curate.neighbours.calls import recording, summarise_calls
from curate.neighbours.search import require_neighbours
from curate.settings import StageSettings
from curate.space.labels import class_sizes, encode_labels
from curate.space.points import Space

__all__ = ["Step", "check_folds", "check_k", "looks_continuous", "removable_rows", "run_stage",
           "run_step", "safety_breach", "selection_breach", "verify_partition"]


def removable_rows(stage: StageSettings, labels: np.ndarray, protected: np.ndarray,
                   task: str = "classification") -> np.ndarray:
    """Rows the stage may remove: of the classes it names (compared as text), not protected."""
    if task == "regression" and stage.classes != "all":
        raise UsageError(f"stage {stage.name!r}: classes = {stage.classes!r} picks classes, but "
                         "this table's target is a number (regression)",
                         hint="remove classes from the stage (every row may go), or protect "
                              "rows with [input] protect")
    if stage.classes == "all":
        mask = np.ones(len(labels), dtype=bool)
    else:
        names, codes = encode_labels(labels)
        text = np.asarray(names).astype(str)
        if stage.classes == "all-but-smallest":
            values, counts = class_sizes(labels)
            smallest = values[np.lexsort((values, counts))[0]] if len(values) > 1 else None
            chosen = text != smallest
        else:
            wanted = [str(c) for c in stage.classes]
            unknown = sorted(set(wanted) - set(text.tolist()))
            if unknown:
                raise UsageError(f"stage {stage.name!r}: classes {', '.join(map(quoted, unknown))} "
                                 "do not occur in its input",
                                 hint="use labels that occur: "
                                      f"{', '.join(sorted(set(text.tolist()))[:10])}")
            chosen = np.isin(text, wanted)
        mask = chosen[codes]
    mask[protected] = False
    return mask


def looks_continuous(labels: np.ndarray) -> bool:
    """Whether labels look like a measured quantity rather than classes.

    True when every label reads as a number and there are ten or more distinct
    values, some of them fractional or more than a quarter as many as rows
    (common practice, no source: class codes are few and whole numbers).

    Examples
    --------
    >>> looks_continuous(np.array([f"1.5{i}" for i in range(10)] * 3))
    True
    >>> looks_continuous(np.array([1, 2, 3, 1, 2, 3]))
    False
    """
    try:
        numbers = np.asarray(labels).astype(np.float64)
    except (TypeError, ValueError):
        return False
    distinct = np.unique(numbers[np.isfinite(numbers)])
    if len(distinct) < 10:
        return False
    return bool(np.any(distinct != np.round(distinct)) or len(distinct) * 4 > len(labels))


def check_folds(stage: StageSettings, labels: np.ndarray, task: str = "classification") -> None:
    """Stop before a cross-validating stage runs when a class (on a regression table: the
    stage's input) has fewer rows than ``folds``."""
    folds = stage.params.get("folds")
    if not isinstance(folds, int) or isinstance(folds, bool) or len(labels) == 0:
        return
    if task == "regression":
        if len(labels) < folds:
            raise UsageError(f"stage {stage.name!r}: folds = {folds}, but its input has only "
                             f"{counted(len(labels), 'row')}",
                             hint=f"lower folds to {len(labels)}" if len(labels) >= 2 else
                             "a stage cannot cross-validate fewer than two rows")
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


def check_k(stage: StageSettings, labels: np.ndarray, removable: np.ndarray,
            task: str = "classification") -> None:
    """Stop before the stage runs when its ``k`` does not fit the rows (and classes) it gets."""
    k = stage.params.get("k")
    if not isinstance(k, int):
        return
    require_neighbours(k, len(labels), where=f"stage {stage.name!r}: ")
    if task == "regression":
        return
    values, _ = class_sizes(labels[removable])
    sizes = dict(zip(*class_sizes(labels), strict=True))
    small = [str(v) for v in values if sizes[v] <= k]
    if not small or not method_for(stage.method, task).compares_classes:
        return
    size = int(sizes[small[0]])
    problem = (f"stage {stage.name!r}: k = {k} is not below the size of class {small[0]!r} "
               f"({counted(size, 'row')}), so its rows cannot outvote their "
               "neighbours")
    reach = "keep that class out of reach with classes = \"all-but-smallest\" or a list of classes"
    if looks_continuous(labels):
        raise UsageError(
            f"{problem}; the label looks continuous ({len(sizes)} distinct numbers among "
            f"{counted(len(labels), 'row')}), and curate treats each distinct value as a class",
            hint="if it is a numeric target, set [input] task = \"regression\"")
    hint = (f"lower k below {size}, or {reach}" if size > 1 else
            f"a class of one row has no neighbours of its own to vote with: {reach}, or drop "
            "such rows")
    raise UsageError(problem, hint=hint)


def _limit_hint(stage: StageSettings) -> str:
    """What to change when a stage goes over its safety limit, in the terms of its method."""
    info = method_for(stage.method, "classification")
    names = {p.name for p in info.params}
    tips = []
    lead = ("the rows copy kept rows exactly: if they are genuine repeated observations, "
            if not info.uses_neighbours and not names else "")
    if "k" in names:
        tips.append("try another k")
    if "radius" in names:
        tips.append("use a smaller radius (curate distances shows the distances)")
    if "threshold" in names:
        tips.append("raise threshold")
    if stage.params.get("vote") == "unanimous":
        tips.append("use vote = \"majority\"")
    if stage.params.get("policy") == "drop-all":
        tips.append("use policy = \"keep-majority\" or \"report\"")
    tips.append("keep the class out of reach with classes = \"all-but-smallest\" or a list of "
                "classes (or protect its rows)")
    return (f"{lead}{'; '.join(tips)}; or raise max_removed_share for this stage if that share is "
            "expected (1.0 switches the limit off)")


def _rows_breach(stage: StageSettings, total: int, removed_local: np.ndarray,
                 ids: list[Any], verb: str = "remove") -> SafetyLimitError | None:
    share = len(removed_local) / total
    if share <= stage.max_removed_share:
        return None
    return SafetyLimitError(
        f"stage {stage.name!r} ({stage.method}) would {verb} {len(removed_local)} of {total} "
        f"rows ({share:.0%}), over its limit max_removed_share = {stage.max_removed_share}; "
        f"{first_ids([ids[i] for i in removed_local])}",
        hint="review why (a larger alpha or threshold removes less), or raise "
             "max_removed_share for this stage if that share is expected (condensing stages "
             "usually remove most rows)")


def safety_breach(stage: StageSettings, labels: np.ndarray, removed_local: np.ndarray,
                  ids: list[Any], task: str = "classification",
                  verb: str = "remove") -> SafetyLimitError | None:
    """The error a run stops with when the stage removes (or relabels) too much of a class,
    else None.

    On a regression table the limit bounds the share of all the stage's rows, and
    ``keep_every_class`` does not apply (there are no classes).
    """
    regression = task == "regression"
    off = stage.max_removed_share >= 1.0 and (regression or not stage.keep_every_class)
    if off or len(removed_local) == 0:
        return None
    if regression:
        return _rows_breach(stage, len(labels), removed_local, ids, verb)
    values, entering = class_sizes(labels)
    leaving = dict(zip(*class_sizes(labels[removed_local]), strict=True))
    for value, total in zip(values.tolist(), entering.tolist(), strict=True):
        gone = int(leaving.get(value, 0))
        vanished = stage.keep_every_class and gone == total
        if gone / total <= stage.max_removed_share and not vanished:
            continue
        rows = [ids[i] for i in removed_local if str(labels[i]) == value]
        if vanished:
            limit = ("and the class would vanish: by default a condensing or hybrid stage may "
                     "shrink a class to any share but must keep one of its rows")
        else:
            limit = (f"({gone / total:.0%}), over its limit max_removed_share = "
                     f"{stage.max_removed_share:g}")
        return SafetyLimitError(
            f"stage {stage.name!r} ({stage.method}) would {verb} {gone} of "
            f"{counted(total, 'row')} of class {quoted(value)} {limit}; {first_ids(rows)}",
            hint=_limit_hint(stage))
    return None


def run_stage(stage: StageSettings, space: Space, labels: np.ndarray, protected: np.ndarray,
              seed: int, task: str = "classification") -> Selection:
    """Run one stage's method on ``space`` (rows still kept) and return its selection."""
    info = method_for(stage.method, task, f"stage {stage.name!r}")
    removable = removable_rows(stage, labels, protected, task)
    if info.uses_neighbours:
        check_k(stage, labels, removable, task)
    check_folds(stage, labels, task)
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
             seed: int, ids: list[Any], task: str = "classification") -> Step:
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
        sel = run_stage(stage, space, labels, protected, seed, task)
    if calls:
        sel.info["engine"] = summarise_calls(calls)
    verify_partition(sel, space.n, stage)
    return Step(sel, selection_breach(stage, labels, sel, sel.removed, ids, task))


def selection_breach(stage: StageSettings, labels: np.ndarray, sel: Selection,
                     removed: np.ndarray, ids: list[Any],
                     task: str = "classification") -> SafetyLimitError | None:
    """:func:`safety_breach` of a stage's result: its ``removed`` positions or, when it
    relabels, the rows it relabels (relabelling half a class is as suspect as removing it)."""
    if sel.action == "relabel" and sel.flagged is not None:
        return safety_breach(stage, labels, sel.flagged.removed, ids, task, "relabel")
    return safety_breach(stage, labels, removed, ids, task)
