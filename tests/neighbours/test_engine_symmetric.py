"""The fast engine's self-search computes each pair once and still returns the reference answer.

Outside reference: scipy's cdist with the promised tie rule (distance, then
position), via neighbour_fixtures.reference_knn.
"""

from __future__ import annotations

import numpy as np
import pytest
from neighbour_fixtures import assert_same, reference_knn, tied_matrix

from curate.neighbours._fast import _symmetric, fast_kneighbors
from curate.neighbours._plan import make_request, plan_for


@pytest.mark.parametrize("threads", [1, 2, 3])
@pytest.mark.parametrize(("rows", "dims", "memory_mb"), [(900, 3, 64), (2500, 8, 4),
                                                         (1300, 20, 64)])
def test_self_search_equals_cdist(threads: int, rows: int, dims: int, memory_mb: int) -> None:
    matrix = tied_matrix(seed=rows + dims, rows=rows, dims=dims)  # lattice ties, copied rows
    req = make_request(matrix, "euclidean", None, None, True)
    plan = plan_for(memory_mb, rows, rows, dims, 5, threads=threads)
    assert _symmetric(req, plan)  # the path under test
    every = np.arange(rows)
    for k in (1, 5):
        got = fast_kneighbors(req, k, plan_for(memory_mb, rows, rows, dims, k, threads=threads))
        assert_same(got, reference_knn(matrix, "euclidean", every, every, k, True), every,
                    f"threads={threads} k={k}")


def test_other_requests_take_the_general_path() -> None:
    matrix = np.random.default_rng(2).random((400, 4))
    plan = plan_for(64, 400, 400, 4, 3)
    assert not _symmetric(make_request(matrix, "euclidean", None, None, False), plan)
    assert not _symmetric(make_request(matrix, "manhattan", None, None, True), plan)
    assert not _symmetric(make_request(matrix, "euclidean", np.arange(300), None, True), plan)
    # lists that would not fit the memory limit: the general path, which cuts the queries
    big = np.zeros((200_000, 2))
    assert not _symmetric(make_request(big, "euclidean", None, None, True),
                          plan_for(1, 200_000, 200_000, 2, 3))
