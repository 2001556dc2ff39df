"""Class labels as codes: the sorted distinct labels, each row's code, and the class sizes.

A label column has few distinct values, and ``np.unique`` sorts every row to
find them: on a million string labels that took seconds, and a run or an
update asks it again for every stage (the method's codes, the class
restriction, the k check, the safety limit, the summary). Peeling off one
value at a time, each with a single vectorised comparison, finds the same
answer in one pass per class; with more than :data:`FEW_CLASSES` distinct
values it falls back to ``np.unique``.
"""

from __future__ import annotations

import numpy as np

__all__ = ["FEW_CLASSES", "class_sizes", "encode_labels"]

FEW_CLASSES = 64


def _peel(values: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    codes = np.empty(len(values), dtype=np.int64)
    rest, where = values, np.arange(len(values))
    seen: list[object] = []
    while len(rest):
        if len(seen) == FEW_CLASSES:
            return None
        hit = rest == rest[0]
        if not isinstance(hit, np.ndarray) or hit.shape != rest.shape or not hit[0]:
            return None  # a value unequal to itself (NaN), or values that do not compare
        codes[where[hit]] = len(seen)
        seen.append(rest[0])
        rest, where = rest[~hit], where[~hit]
    names = np.array(seen, dtype=values.dtype)
    order = np.argsort(names, kind="stable")
    rank = np.empty(len(order), dtype=np.int64)
    rank[order] = np.arange(len(order))
    return names[order], rank[codes]


def encode_labels(labels: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``np.unique(labels, return_inverse=True)``: sorted distinct labels, code per row.

    Examples
    --------
    >>> names, codes = encode_labels(np.array(["b", "a", "b", "c"]))
    >>> names.tolist(), codes.tolist()
    (['a', 'b', 'c'], [1, 0, 1, 2])
    >>> encode_labels(np.array([2.0, np.nan, 2.0]))[1].tolist()
    [0, 1, 0]
    """
    values = np.asarray(labels)
    found = _peel(values) if values.ndim == 1 else None
    if found is not None:
        return found
    names, codes = np.unique(values, return_inverse=True)
    return names, codes.astype(np.int64).reshape(-1)


def class_sizes(labels: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``np.unique(labels.astype(str), return_counts=True)``: each label as text, in text
    order, and its number of rows.

    Examples
    --------
    >>> text, sizes = class_sizes(np.array([10, 2, 10]))
    >>> text.tolist(), sizes.tolist()
    (['10', '2'], [2, 1])
    """
    names, codes = encode_labels(labels)
    counts = np.bincount(codes, minlength=len(names))
    sizes: dict[str, int] = {}
    for name, count in zip(np.asarray(names).astype(str).tolist(), counts.tolist(), strict=True):
        sizes[name] = sizes.get(name, 0) + count
    text = np.array(sorted(sizes), dtype=str)
    return text, np.array([sizes[t] for t in text.tolist()], dtype=np.int64)
