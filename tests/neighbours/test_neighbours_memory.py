"""Neighbour queries keep their temporaries within ``[engine] memory_mb``.

What is measured: the peak of numpy's allocations during one query (Python's
tracemalloc, which numpy reports to), beyond the matrix that already exists.
Allowed: ``memory_mb``, plus the results (distances and positions), plus the
position arrays of the request (queries, sorted reference, own index), plus,
for brute force, the one gathered copy of the reference rows that
``Space.distances`` makes per block, and for the approximate backend its
index (a float32 copy of the rows in cell order). Common practice, no source: a memory
limit covers working storage, not the input and output themselves.
"""

from __future__ import annotations

import tracemalloc

import numpy as np
import pytest

from curate.neighbours import kneighbors
from curate.settings import EngineSettings
from curate.space import Space

ROWS, COLS, K = 8000, 16, 3


@pytest.mark.parametrize("metric", ["euclidean", "manhattan"])
@pytest.mark.parametrize("backend", ["fast", "brute", "approximate"])
@pytest.mark.parametrize("memory_mb", [1, 3])
def test_peak_stays_within_the_limit(backend: str, metric: str, memory_mb: int) -> None:
    matrix = np.random.default_rng(51).random((ROWS, COLS))
    space = Space.from_matrix(matrix, metric, EngineSettings(backend, memory_mb))
    kneighbors(Space.from_matrix(matrix[:300], metric, EngineSettings(backend, memory_mb)), K)
    tracemalloc.start()
    try:
        kneighbors(space, K)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    results = ROWS * K * (8 + 8)
    positions = 3 * ROWS * 8
    gathered = matrix.nbytes if backend == "brute" else 0
    # the approximate index is itself a float32 copy of the rows with their cell order
    # (like any index, it is kept beside the data, not cut into pieces)
    index = ROWS * ((COLS + 1) * 4 + 3 * 8) if backend == "approximate" else 0
    allowed = memory_mb * 2**20 + results + positions + gathered + index
    assert peak <= allowed, f"{backend} {metric}: peak {peak / 2**20:.2f} MiB, allowed " \
                            f"{allowed / 2**20:.2f} MiB"
