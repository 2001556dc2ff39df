"""Data with planted ties and the outside references the neighbour tests compare with.

The reference answer is computed here from scipy's cdist and the rule the
engine promises (distance, then position): nothing in it comes from curate.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial.distance import cdist

SCIPY = {"euclidean": "euclidean", "manhattan": "cityblock"}
EXACT_BACKENDS = ("brute", "sklearn", "faiss", "fast")


def tied_matrix(seed: int, rows: int = 900, dims: int = 3) -> np.ndarray:
    """Lattice points, random points and duplicated rows.

    Lattice coordinates are multiples of 0.25, so every squared and every
    Manhattan distance between them is exact in binary: equal distances are
    exact ties, many of them (a point's lattice neighbours along each axis).
    """
    rng = np.random.default_rng(seed)
    half = rows // 2
    lattice = rng.integers(0, 5, size=(half, dims)) * 0.25
    scattered = rng.random((rows - half, dims))
    matrix = np.vstack([lattice, scattered])
    matrix[rng.choice(rows, 40, replace=False)] = matrix[rng.choice(rows, 40, replace=False)]
    return matrix


def reference_knn(matrix: np.ndarray, metric: str, queries: np.ndarray, reference: np.ndarray,
                  k: int, exclude_self: bool) -> tuple[np.ndarray, np.ndarray]:
    """k nearest by scipy cdist, ties by position, the query's own row left out if asked."""
    ref = np.sort(reference)
    dist = cdist(matrix[queries], matrix[ref], SCIPY[metric])
    if exclude_self:
        dist[queries[:, None] == ref[None, :]] = np.inf
    order = np.lexsort((np.broadcast_to(ref, dist.shape), dist), axis=1)[:, :k]
    return np.take_along_axis(dist, order, axis=1), ref[order]


def reference_radius(matrix: np.ndarray, metric: str, queries: np.ndarray,
                     reference: np.ndarray, radius: float,
                     exclude_self: bool) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """Rows within ``radius`` (inclusive) by scipy cdist, by distance then position."""
    ref = np.sort(reference)
    dist = cdist(matrix[queries], matrix[ref], SCIPY[metric])
    if exclude_self:
        dist[queries[:, None] == ref[None, :]] = np.inf
    dists, poss = [], []
    for row in dist:
        hit = np.flatnonzero(row <= radius)
        order = np.lexsort((ref[hit], row[hit]))
        dists.append(row[hit][order])
        poss.append(ref[hit][order])
    return dists, poss


def assert_same(got: tuple[np.ndarray, np.ndarray], want: tuple[np.ndarray, np.ndarray],
                queries: np.ndarray, what: str) -> None:
    """Equal neighbours and bitwise equal distances; a failure names query and pair."""
    (gd, gi), (wd, wi) = got, want
    assert gi.shape == wi.shape, f"{what}: shape {gi.shape}, reference {wi.shape}"
    bad = np.argwhere((gi != wi) | (gd != wd))
    if len(bad):
        row, slot = bad[0]
        raise AssertionError(
            f"{what}: query row {queries[row]}, neighbour {slot}: got row {gi[row, slot]} at "
            f"{gd[row, slot]!r}, reference has row {wi[row, slot]} at {wd[row, slot]!r} "
            f"({len(bad)} disagreements)")


def assert_same_lists(got: tuple[list[np.ndarray], list[np.ndarray]],
                      want: tuple[list[np.ndarray], list[np.ndarray]], queries: np.ndarray,
                      what: str) -> None:
    """Per-query lists equal (rows and distances); a failure names the query and the rows."""
    for row, (gd, gi, wd, wi) in enumerate(zip(*got, *want, strict=True)):
        if not (np.array_equal(gi, wi) and np.array_equal(gd, wd)):
            extra = sorted(set(gi.tolist()) ^ set(wi.tolist()))[:5]
            raise AssertionError(f"{what}: query row {queries[row]}: got rows {gi.tolist()[:8]}, "
                                 f"reference {wi.tolist()[:8]} (differing rows {extra})")
