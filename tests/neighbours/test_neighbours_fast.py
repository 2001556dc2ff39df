"""The fast engine's own cuts: tiny tiles, several threads, and the second pass.

Outside reference: scipy's cdist (see neighbour_fixtures); distances must be
bitwise the values cdist gives.
"""

from __future__ import annotations

import numpy as np
import pytest
from neighbour_fixtures import (
    assert_same,
    assert_same_lists,
    reference_knn,
    reference_radius,
    tied_matrix,
)
from scipy.spatial.distance import cdist

from curate.neighbours._exact import exact_pairs
from curate.neighbours._fast import fast_kneighbors, fast_radius
from curate.neighbours._plan import Plan, make_request

PLANS = [
    Plan(block=7, tile=13, slab=50, threads=2, width=5),
    Plan(block=64, tile=64, slab=64, threads=1, width=6),
    Plan(block=1024, tile=512, slab=100_000, threads=2, width=3),
]


@pytest.mark.parametrize("metric", ["euclidean", "manhattan"])
@pytest.mark.parametrize("plan", PLANS, ids=["tiny", "square", "default"])
def test_tile_cuts_do_not_change_answers(plan: Plan, metric: str) -> None:
    matrix = tied_matrix(seed=21, rows=500)
    rng = np.random.default_rng(22)
    queries = rng.permutation(500)[:180]
    reference = rng.permutation(500)[:400]
    for k in (1, 3):
        req = make_request(matrix, metric, queries, reference, True)
        wide = Plan(plan.block, plan.tile, plan.slab, plan.threads, max(plan.width, k))
        got = fast_kneighbors(req, k, wide)
        want = reference_knn(matrix, metric, queries, reference, k, True)
        assert_same(got, want, queries, f"{plan} k={k}")
    got_r = fast_radius(req, 0.4, plan)
    want_r = reference_radius(matrix, metric, queries, reference, 0.4, True)
    assert_same_lists(got_r, want_r, queries, f"{plan} radius")


def test_second_pass_when_candidates_are_all_copies() -> None:
    # Width k: with 12 copies of each point, no first-pass candidate set is provably
    # complete, so every query goes through the collecting second pass.
    base = np.random.default_rng(23).random((20, 5))
    matrix = np.repeat(base, 12, axis=0)
    every = np.arange(len(matrix))
    req = make_request(matrix, "euclidean", None, None, True)
    got = fast_kneighbors(req, 4, Plan(block=16, tile=32, slab=96, threads=2, width=4))
    assert_same(got, reference_knn(matrix, "euclidean", every, every, 4, True), every, "copies")


@pytest.mark.parametrize("metric", ["euclidean", "manhattan"])
def test_exact_distances_are_bitwise_cdist(metric: str) -> None:
    rng = np.random.default_rng(24)
    matrix = rng.normal(size=(300, 17)) * rng.random(17) * 100
    a, b = rng.integers(0, 300, 2000), rng.integers(0, 300, 2000)
    want = cdist(matrix, matrix, "euclidean" if metric == "euclidean" else "cityblock")[a, b]
    assert np.array_equal(exact_pairs(matrix, a, b, metric), want)


def test_large_offsets_keep_exact_answers() -> None:
    # Centring before the float32 product keeps the rounding bound small; with an
    # offset of 1e6 an uncentred float32 product could not separate these points.
    matrix = tied_matrix(seed=25, rows=400) + 1e6
    every = np.arange(400)
    req = make_request(matrix, "euclidean", None, None, False)
    got = fast_kneighbors(req, 3, Plan(block=50, tile=64, slab=200, threads=1, width=5))
    assert_same(got, reference_knn(matrix, "euclidean", every, every, 3, False), every,
                "offset")


@pytest.mark.parametrize("scale", [1e-30, 1e20])
@pytest.mark.parametrize("backend", ["fast", "faiss"])
def test_tiny_and_huge_values_stay_exact(backend: str, scale: float) -> None:
    # 1e-30 underflows float32 products (the bound's absolute term covers it); 1e20
    # overflows float32 squares, so the engine says so and answers in float64.
    from curate.neighbours import choose_backend, kneighbors
    from curate.settings import EngineSettings
    from curate.space import Space

    matrix = tied_matrix(seed=26, rows=400) * scale
    space = Space.from_matrix(matrix, "euclidean", EngineSettings(backend, 1))
    picked, reason = choose_backend(space)
    assert (picked == "sklearn") == (scale > 1), reason
    every = np.arange(400)
    assert_same(kneighbors(space, 3), reference_knn(matrix, "euclidean", every, every, 3, True),
                every, f"{backend} scale {scale}")
