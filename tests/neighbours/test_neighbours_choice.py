"""Backend choice, its reasons, bad requests, and spaces whose distance is not Lp.

Outside references: scikit-learn's NearestNeighbors with the Chebyshev
metric (for a space that is not plain Euclidean or Manhattan).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pytest
from scipy.spatial.distance import cdist
from sklearn.neighbors import NearestNeighbors

from curate.errors import UsageError
from curate.neighbours import choose_backend, kneighbors, radius_neighbors
from curate.settings import EngineSettings
from curate.space import Space


def _space(rows: int, dims: int, backend: str = "auto", metric: str = "euclidean") -> Space:
    return Space.from_matrix(np.zeros((rows, dims)), metric, EngineSettings(backend, 64))


def test_auto_choice_follows_size_and_dimension() -> None:
    assert choose_backend(_space(400, 20))[0] == "brute"
    assert choose_backend(_space(50_000, 20))[0] == "fast"
    assert choose_backend(_space(50_000, 3))[0] == "sklearn"
    assert choose_backend(_space(50_000, 20), 5, 50_000)[0] == "brute"  # a few queries
    backend, reason = choose_backend(_space(50_000, 20, metric="manhattan"))
    assert backend == "fast" and "20 columns" in reason


def test_asked_backend_is_kept_and_said() -> None:
    for backend in ("brute", "sklearn", "faiss", "fast", "approximate"):
        got, reason = choose_backend(_space(10, 2, backend))
        assert got == backend and backend in reason


def test_unknown_backend_is_a_usage_error() -> None:
    with pytest.raises(UsageError, match="unknown neighbour backend 'kd'"):
        kneighbors(_space(10, 2, "kd"), 2)


def test_bad_requests_name_the_problem() -> None:
    space = _space(5, 2)
    with pytest.raises(ValueError, match="asked for 5 neighbours among 4 rows"):
        kneighbors(space, 5)
    with pytest.raises(UsageError, match="query position 9 is outside"):
        kneighbors(space, 1, queries=np.array([9]))
    with pytest.raises(UsageError, match="reference position 2 is given more than once"):
        kneighbors(space, 1, reference=np.array([2, 2, 3]))


@dataclass(frozen=True)
class ChebyshevSpace(Space):
    """A space whose distance is not Euclidean or Manhattan."""

    def distances(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:  # type: ignore[override]
        return cdist(self.matrix[np.asarray(a)], self.matrix[np.asarray(b)], "chebyshev")


@pytest.mark.parametrize("backend", ["auto", "fast", "faiss", "approximate"])
def test_other_distances_go_through_space_distances(backend: str) -> None:
    matrix = np.random.default_rng(41).random((400, 3))
    space = ChebyshevSpace(matrix, "chebyshev", engine=EngineSettings(backend, 1))
    assert choose_backend(space)[0] == "brute"
    dist, pos = kneighbors(space, 4)
    model = NearestNeighbors(n_neighbors=4, algorithm="brute", metric="chebyshev").fit(matrix)
    want_d, want_i = model.kneighbors()
    assert np.array_equal(pos, want_i)
    np.testing.assert_allclose(dist, want_d, rtol=1e-12)
    d_r, i_r = radius_neighbors(space, 0.05, queries=np.arange(20))
    want_r = model.radius_neighbors(matrix[:20], radius=0.05, sort_results=True)[1]
    for row in range(20):
        assert sorted(i_r[row].tolist()) == sorted(set(want_r[row].tolist()) - {row}), row


@pytest.mark.parametrize("backend", ["auto", "sklearn", "faiss", "fast", "approximate"])
def test_no_columns_means_every_row_ties(backend: str) -> None:
    # With no feature columns every distance is 0 (the empty sum), so the nearest are
    # simply the lowest other positions (the promised tie rule).
    space = Space.from_matrix(np.zeros((600, 0)), engine=EngineSettings(backend, 1))
    assert choose_backend(space)[0] == "brute"
    dist, pos = kneighbors(space, 2, queries=np.array([0, 1, 599]))
    assert pos.tolist() == [[1, 2], [0, 2], [0, 1]] and not dist.any()
