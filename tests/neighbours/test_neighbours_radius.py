"""Radius neighbours of every backend against a direct scipy cdist computation.

Outside reference: scipy's cdist, rows at exactly the radius counted inside,
ordered by distance then position.
"""

from __future__ import annotations

import numpy as np
import pytest
from neighbour_fixtures import EXACT_BACKENDS, assert_same_lists, reference_radius, tied_matrix

from curate.errors import UsageError
from curate.neighbours import radius_neighbors
from curate.settings import EngineSettings
from curate.space import Space


@pytest.mark.parametrize("metric", ["euclidean", "manhattan"])
@pytest.mark.parametrize("backend", [*EXACT_BACKENDS, "approximate"])
def test_radius_matches_cdist(backend: str, metric: str) -> None:
    # Radii 0.25 and 0.5 fall exactly on lattice distances: the boundary must count.
    # Radius 0 finds exact copies only.
    matrix = tied_matrix(seed=11, rows=600)
    space = Space.from_matrix(matrix, metric, EngineSettings(backend, 1))
    rng = np.random.default_rng(12)
    queries = rng.permutation(len(matrix))[:200]
    reference = rng.permutation(len(matrix))[:450]
    for radius, exclude_self in [(0.0, True), (0.25, True), (0.5, False)]:
        got = radius_neighbors(space, radius, queries=queries, reference=reference,
                               exclude_self=exclude_self)
        want = reference_radius(matrix, metric, queries, reference, radius, exclude_self)
        assert_same_lists(got, want, queries, f"{backend} {metric} radius={radius}")


def test_radius_of_all_rows_without_subsets() -> None:
    matrix = tied_matrix(seed=13, rows=300)
    every = np.arange(len(matrix))
    for backend in EXACT_BACKENDS:
        space = Space.from_matrix(matrix, "euclidean", EngineSettings(backend, 256))
        got = radius_neighbors(space, 0.3)
        assert_same_lists(got, reference_radius(matrix, "euclidean", every, every, 0.3, True),
                          every, backend)


def test_negative_radius_finds_nothing_and_nan_is_refused() -> None:
    # Common practice, no source: no distance is below zero; NaN is no radius.
    space = Space.from_matrix(tied_matrix(seed=14, rows=50))
    dists, rows = radius_neighbors(space, -1.0)
    assert all(len(r) == 0 for r in rows) and len(dists) == 50
    with pytest.raises(UsageError, match="radius is NaN"):
        radius_neighbors(space, float("nan"))
