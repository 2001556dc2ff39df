"""Every exact backend, at several memory limits, returns the reference neighbours.

Outside references: scipy's cdist with the promised tie rule (distance, then
position), and scikit-learn's NearestNeighbors(algorithm="brute").
"""

from __future__ import annotations

import numpy as np
import pytest
from neighbour_fixtures import EXACT_BACKENDS, assert_same, reference_knn, tied_matrix
from sklearn.neighbors import NearestNeighbors

from curate.neighbours import kneighbors
from curate.settings import EngineSettings
from curate.space import Space

CASES = [  # (k, exclude_self, subsets)
    (1, True, False),
    (4, True, True),
    (4, False, False),
    (25, False, True),
]


@pytest.mark.parametrize("metric", ["euclidean", "manhattan"])
@pytest.mark.parametrize("backend", EXACT_BACKENDS)
@pytest.mark.parametrize("memory_mb", [1, 256])
def test_planted_ties_match_cdist(backend: str, metric: str, memory_mb: int) -> None:
    # memory_mb = 1 cuts 900 rows into many query blocks and reference tiles.
    matrix = tied_matrix(seed=3)
    space = Space.from_matrix(matrix, metric, EngineSettings(backend, memory_mb))
    rng = np.random.default_rng(4)
    for k, exclude_self, subsets in CASES:
        queries = rng.permutation(len(matrix))[:300] if subsets else np.arange(len(matrix))
        reference = rng.permutation(len(matrix))[:600] if subsets else np.arange(len(matrix))
        got = kneighbors(space, k, queries=queries, reference=reference,
                         exclude_self=exclude_self)
        want = reference_knn(matrix, metric, queries, reference, k, exclude_self)
        assert_same(got, want, queries, f"{backend} {metric} k={k} exclude_self={exclude_self}")


@pytest.mark.parametrize("metric", ["euclidean", "manhattan"])
@pytest.mark.parametrize("backend", EXACT_BACKENDS)
def test_random_rows_match_sklearn_brute_force(backend: str, metric: str) -> None:
    # Continuous data has no ties, so scikit-learn's order is the only order.
    matrix = np.random.default_rng(5).normal(size=(700, 6))
    space = Space.from_matrix(matrix, metric, EngineSettings(backend, 1))
    dist, pos = kneighbors(space, 5, exclude_self=False)
    model = NearestNeighbors(n_neighbors=5, algorithm="brute", metric=metric).fit(matrix)
    want_d, want_i = model.kneighbors(matrix)
    bad = np.flatnonzero((pos != want_i).any(axis=1))
    assert len(bad) == 0, f"{backend}: query row {bad[0]}: {pos[bad[0]]} vs {want_i[bad[0]]}"
    # scikit-learn's brute force expands |a-b|^2 = |a|^2 - 2ab + |b|^2, which leaves a rounding
    # residue of up to ~1e-7 where the true distance is 0 (a row against itself); ours is exact.
    np.testing.assert_allclose(dist, want_d, rtol=1e-9, atol=1e-7)


@pytest.mark.parametrize("backend", EXACT_BACKENDS)
def test_tied_distances_match_sklearn_brute_force(backend: str) -> None:
    # With ties scikit-learn may pick another row at the same distance, so compare
    # the distances only; the rows themselves are checked against cdist above.
    matrix = tied_matrix(seed=6)
    space = Space.from_matrix(matrix, "euclidean", EngineSettings(backend, 1))
    dist, _ = kneighbors(space, 6)
    model = NearestNeighbors(n_neighbors=6, algorithm="brute").fit(matrix)
    want_d, _ = model.kneighbors()  # no argument: each row's own position is left out
    np.testing.assert_allclose(dist, want_d, rtol=1e-9, atol=1e-7)


def test_duplicates_beyond_k_fall_to_the_lowest_positions() -> None:
    # 30 copies of one row: each copy's 5 nearest are the 5 lowest other copies (distance 0).
    matrix = np.vstack([np.zeros((30, 4)), np.random.default_rng(7).random((200, 4)) + 1])
    for backend in EXACT_BACKENDS:
        space = Space.from_matrix(matrix, "euclidean", EngineSettings(backend, 1))
        _, pos = kneighbors(space, 5, queries=np.arange(30))
        want = [[j for j in range(30) if j != q][:5] for q in range(30)]
        assert pos.tolist() == want, backend
