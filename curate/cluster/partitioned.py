"""Condensing and prototype selection by stratified partitions, then one pass over their union.

The stratification approach of Cano, Herrera and Lozano (2005): split the rows
into ``parts`` disjoint strata that keep the class proportions, select within
each stratum independently (in parallel, on a cluster), then run the same
method once more over the union of what the strata kept. The result
approximates the single-machine selection; it is not equal to it.

What is guaranteed, for a method that is consistent on its own input (Hart
1968's CNN: 1-NN on the kept rows labels every input row correctly): the kept
rows are consistent on the union pass's input, and each stratum's kept rows
were consistent on that stratum. Rows removed in a stratum are not promised to
be labelled correctly by the final kept rows.

This module is pure and knows nothing of Dask: it takes a ``run_all`` callable
that runs one method call per job (sequentially here, on the workers in
:mod:`curate.cluster.stage`).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np

from curate.methods.base import Selection, encode
from curate.space.points import Space

__all__ = ["APPROXIMATION_NOTE", "RunAll", "partitioned_selection", "run_sequentially",
           "stratified_parts"]

APPROXIMATION_NOTE = ("selected per stratified partition, then once more over the union of the "
                      "partitions' kept rows (Cano, Herrera and Lozano 2005); this approximates "
                      "the single-machine selection and may keep different rows")

# run_all(func, space, labels, removable, rows, seed, params, what): one call of func per
# entry of rows (positions of space), results in the same order.
RunAll = Callable[[Callable[..., Selection], Space, np.ndarray, np.ndarray,
                   Sequence[np.ndarray], int, Mapping[str, Any], str], list[Selection]]


def stratified_parts(labels: np.ndarray, parts: int, seed: int) -> list[np.ndarray]:
    """Split positions into ``parts`` strata with the class proportions of the whole.

    Each class's rows are shuffled (``numpy.random.default_rng(seed)``) and
    dealt round-robin, the deal continuing from class to class, so that per
    class and overall the strata sizes differ by at most one, as in
    scikit-learn's ``StratifiedKFold``. Each stratum lists its positions in
    ascending order, so order-dependent methods see rows in input order.

    Examples
    --------
    >>> parts = stratified_parts(np.array(list("aaaabbbbbc")), 2, seed=0)
    >>> [len(p) for p in parts]
    [5, 5]
    >>> sorted(np.concatenate(parts).tolist()) == list(range(10))
    True
    """
    if parts < 1:
        raise ValueError(f"parts must be 1 or more, got {parts}")
    _, codes = encode(np.asarray(labels))
    rng = np.random.default_rng(seed)
    owner = np.empty(len(codes), dtype=np.int64)
    start = 0
    for c in range(int(codes.max()) + 1 if len(codes) else 0):
        members = rng.permutation(np.flatnonzero(codes == c))
        owner[members] = (start + np.arange(len(members))) % parts
        start = (start + len(members)) % parts
    return [np.flatnonzero(owner == p) for p in range(parts)]


def run_sequentially(func: Callable[..., Selection], space: Space, labels: np.ndarray,
                     removable: np.ndarray, rows: Sequence[np.ndarray], seed: int,
                     params: Mapping[str, Any], what: str = "") -> list[Selection]:
    """Run ``func`` on each subset of rows, one after another in this process.

    The reference for the cluster runner; ``what`` names the pass in messages.

    Examples
    --------
    >>> from curate.methods import METHODS
    >>> s = Space.from_matrix([[0.0], [0.1], [5.0], [5.1], [5.2]])
    >>> y = np.array(["a", "a", "b", "b", "a"])
    >>> sels = run_sequentially(METHODS["enn"].func, s, y, np.ones(5, bool),
    ...                         [np.array([0, 1, 2, 3]), np.array([2, 3, 4])], 0, {"k": 1})
    >>> [sel.removed.tolist() for sel in sels]
    [[], [2]]
    """
    return [func(space.subset(r), labels[r], removable=removable[r], seed=seed, **dict(params))
            for r in rows]


def partitioned_selection(func: Callable[..., Selection], space: Space, labels: np.ndarray, *,
                          removable: np.ndarray, seed: int, params: Mapping[str, Any],
                          parts: int, run_all: RunAll = run_sequentially) -> Selection:
    """Run ``func`` per stratified partition, then once over the union of their kept rows.

    Returns one :class:`Selection` in positions of ``space``: rows removed in
    a partition keep their reason and evidence with ``step`` 1, rows removed
    in the union pass have ``step`` 2; a ``kept_as`` that points to a row the
    union pass removed is redirected to the row that stands for that one.
    ``info`` says the result is an approximation and gives the partition
    facts; a row's score comes from the last pass it took part in.

    Examples
    --------
    >>> from curate.methods import METHODS
    >>> s = Space.from_matrix([[0.0], [0.1], [0.2], [0.3], [5.0], [5.1], [5.2], [5.3], [1.5]])
    >>> y = np.array(["a", "a", "a", "a", "b", "b", "b", "b", "b"])
    >>> sel = partitioned_selection(METHODS["enn"].func, s, y, removable=np.ones(9, bool),
    ...                             seed=0, params={"k": 1}, parts=2)
    >>> sel.removed.tolist(), sel.step.tolist(), sorted(sel.info["partition_rows"])
    ([8], [1], [4, 5])
    """
    split = [p for p in stratified_parts(labels, parts, seed) if len(p)]
    firsts = run_all(func, space, labels, removable, split, seed, params, "partition")
    union = np.sort(np.concatenate([p[s.kept] for p, s in zip(split, firsts, strict=True)]))
    (last,) = run_all(func, space, labels, removable, [union], seed, params, "union")
    sel = _merge(space.n, split, firsts, union, last)
    sel.info = {"approximate": True, "note": APPROXIMATION_NOTE, "partitions": len(split),
                "partition_rows": [len(p) for p in split],
                "partition_kept": [len(s.kept) for s in firsts], "union_rows": len(union),
                "partition_info": [s.info for s in firsts], "union_info": last.info}
    return sel


def _merge(n: int, split: list[np.ndarray], firsts: list[Selection], union: np.ndarray,
           last: Selection) -> Selection:
    """Map every pass's selection to stage positions and join them into one."""
    passes = [*zip(split, firsts, strict=True), (union, last)]
    stands_for = np.arange(n)  # a row removed in the union pass points to its kept_as
    has_last = last.kept_as >= 0
    stands_for[union[last.removed]] = np.where(has_last, union[np.maximum(last.kept_as, 0)], -1)
    total = len(split)
    removed, kept_as, step = [], [], []
    reason: list[str] = []
    detail: list[str] = []
    neighbours: list[np.ndarray] = []
    distances: list[np.ndarray] = []
    for number, (rows, sel) in enumerate(passes, start=1):
        in_union = number > total
        where = ("in the pass over the union of the partitions" if in_union
                 else f"in partition {number} of {total}")
        removed.append(rows[sel.removed])
        target = np.where(sel.kept_as >= 0, rows[np.maximum(sel.kept_as, 0)], -1)
        kept_as.append(target if in_union else np.where(target >= 0, stands_for[target], -1))
        step.append(np.full(len(sel.removed), 2 if in_union else 1, dtype=np.int64))
        reason.extend(sel.reason)
        detail.extend(f"{d.rstrip('.')} ({where})" for d in sel.detail)
        neighbours.extend(rows[nb] for nb in sel.neighbours)
        distances.extend(sel.distances)
    gone = np.concatenate(removed)
    mask = np.ones(n, dtype=bool)
    mask[gone] = False
    return Selection(kept=np.flatnonzero(mask), removed=gone, reason=reason, detail=detail,
                     neighbours=neighbours, distances=distances, kept_as=np.concatenate(kept_as),
                     step=np.concatenate(step), scores=_scores(n, passes),
                     groups=[rows[g] for rows, sel in passes for g in sel.groups])


def _scores(n: int, passes: list[tuple[np.ndarray, Selection]]) -> dict[str, np.ndarray]:
    out: dict[str, np.ndarray] = {}
    for rows, sel in passes:
        for name, values in sel.scores.items():
            out.setdefault(name, np.full(n, np.nan))[rows] = values
    return out
