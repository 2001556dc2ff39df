"""Groups of rows with equal keys: what the copy methods of both tasks share."""

from __future__ import annotations

import numpy as np

__all__ = ["equal_groups"]


def equal_groups(codes: np.ndarray) -> list[np.ndarray]:
    """Positions of each group of two or more equal codes, in first-seen order, ascending inside.

    Examples
    --------
    >>> [g.tolist() for g in equal_groups(np.array([5, 1, 5, 2, 1]))]
    [[0, 2], [1, 4]]
    """
    order = np.argsort(codes, kind="stable")
    sorted_codes = codes[order]
    cuts = np.flatnonzero(np.diff(sorted_codes)) + 1
    parts = [p for p in np.split(order, cuts) if len(p) > 1]
    return sorted(parts, key=lambda p: int(p[0]))
