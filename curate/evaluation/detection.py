"""How well the stages find known faults: precision and recall against flipped or marked rows.

A stage is scored against the faults its method is meant to catch
(``MethodInfo.catches``: copies for the duplicate stages, wrong labels for
editing), among the faulty rows that reached it; all stages together are
scored against every fault. Counts add up over folds.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from curate.evaluation.stats import FoldOutcome

__all__ = ["detection", "detection_by_stage", "rates", "recall_by_fault"]


def detection(removed: np.ndarray, positives: np.ndarray) -> dict[str, float | int]:
    """Precision and recall of removed rows against known faulty rows (two bool masks).

    Precision is undefined (NaN) when nothing was removed, recall when there
    is nothing to find.

    Examples
    --------
    >>> detection(np.array([1, 1, 0, 0], bool), np.array([1, 0, 1, 0], bool))
    {'removed': 2, 'faulty': 2, 'found': 1, 'precision': 0.5, 'recall': 0.5}
    """
    removed, positives = np.asarray(removed, bool), np.asarray(positives, bool)
    return rates(int(removed.sum()), int(positives.sum()), int(np.sum(removed & positives)))


def rates(removed: int, faulty: int, found: int) -> dict[str, float | int]:
    """Precision ``found / removed`` and recall ``found / faulty`` from counts (NaN when 0/0).

    Examples
    --------
    >>> rates(4, 0, 0)["recall"]
    nan
    """
    return {"removed": removed, "faulty": faulty, "found": found,
            "precision": found / removed if removed else float("nan"),
            "recall": found / faulty if faulty else float("nan")}


def _denominator(meant: Sequence[str]) -> str:
    """What a stage's recall divides by, in words.

    Examples
    --------
    >>> _denominator(["re-sent", "near-copy"])
    'training rows with a re-sent or near-copy fault that reached this stage'
    >>> _denominator([])
    'none: the method is not meant to catch faults (it is scored only in all stages)'
    """
    if not meant:
        return "none: the method is not meant to catch faults (it is scored only in all stages)"
    return f"training rows with a {' or '.join(meant)} fault that reached this stage"


def detection_by_stage(folds: Sequence[FoldOutcome], kinds: Callable[[FoldOutcome], np.ndarray],
                       names: Sequence[str], meant: Sequence[Sequence[str]]) -> dict[str, Any]:
    """Precision and recall of each stage against the faults it is meant to catch, and of all
    stages against every fault.

    ``kinds`` gives each training row's fault kind ("" for none); ``meant``
    the kinds each stage's method is meant to catch. For a stage, ``faulty``
    (the recall's denominator, also in words as ``denominator``) counts the
    rows of those kinds still in its input, ``found`` the ones it removed,
    and precision is ``found / removed``; ``found_any`` counts the removed
    rows with a fault of any kind. A stage meant to catch nothing gets no
    precision or recall (None). ``all_stages`` scores every removal against
    every faulty row.

    Examples
    --------
    A copy stage removes rows 0 and 1 (one re-sent, one flipped label); the
    editing stage then finds the one flip left of two (the other went with
    the copies):

    >>> f = FoldOutcome(5, 2, 2, 0.5, {}, set(), {}, [np.array([0, 1]), np.array([2])], None,
    ...                 np.array(["re-sent", "label-flip", "label-flip", "", ""]))
    >>> out = detection_by_stage([f], FoldOutcome.fault_kinds, ["copies", "mislabels"],
    ...                          [("re-sent",), ("label-flip",)])
    >>> [(s["faulty"], s["found"], s["recall"], s["found_any"]) for s in out["stages"]]
    [(1, 1, 1.0, 2), (1, 1, 1.0, 1)]
    >>> out["all_stages"]["recall"]
    1.0
    """
    sums = np.zeros((len(names), 4), dtype=np.int64)
    every = np.zeros(3, dtype=np.int64)
    for fold in folds:
        kind = np.asarray(kinds(fold))
        bad = kind != ""
        reached = np.ones(fold.n_train, dtype=bool)
        for i, wanted in enumerate(meant):
            gone = fold.removed_rows(i)
            target = reached & np.isin(kind, list(wanted))
            sums[i] += (gone.sum(), target.sum(), (gone & target).sum(), (gone & bad).sum())
            reached &= ~gone
        removed = fold.removed_rows()
        every += (removed.sum(), bad.sum(), (removed & bad).sum())
    stages = []
    for name, wanted, (removed_n, faulty, found, found_any) in zip(names, meant, sums.tolist(),
                                                                   strict=True):
        record: dict[str, Any] = {"stage": name, **rates(removed_n, faulty, found)}
        if not wanted:
            record.update(precision=None, recall=None)
        record.update(found_any=found_any, meant_for=list(wanted),
                      denominator=_denominator(wanted))
        stages.append(record)
    return {"stages": stages, "all_stages": rates(*(int(v) for v in every))}


def recall_by_fault(folds: Sequence[FoldOutcome]) -> dict[str, dict[str, Any]]:
    """Recall of all stages together for each kind of known fault, over every fold.

    Examples
    --------
    >>> f = FoldOutcome(3, 1, 2, 0.5, {}, set(), {}, [np.array([0])], None,
    ...                 np.array(["copy", "copy", ""]))
    >>> recall_by_fault([f])
    {'copy': {'faulty': 2, 'found': 1, 'recall': 0.5}}
    """
    found: dict[str, list[int]] = {}
    for fold in folds:
        if fold.faults is None:
            continue
        every = fold.removed_rows()
        for kind in np.unique(fold.faults[fold.faults != ""]).tolist():
            at = fold.faults == kind
            counts = found.setdefault(kind, [0, 0])
            counts[0] += int(at.sum())
            counts[1] += int((every & at).sum())
    return {kind: {"faulty": n, "found": hit, "recall": hit / n}
            for kind, (n, hit) in sorted(found.items())}
