"""The approximate backend: seeded, exact distances for what it returns, honest recall.

Outside references: the exact answer from scipy's cdist (neighbour_fixtures)
and the definition of recall (share of the true k nearest that were returned).
"""

from __future__ import annotations

import numpy as np
from neighbour_fixtures import reference_knn

from curate.neighbours import engine_report, kneighbors
from curate.space import EngineSettings, Space


def _space(rows: int = 1500, backend: str = "approximate") -> Space:
    matrix = np.random.default_rng(31).normal(size=(rows, 12))
    return Space.from_matrix(matrix, "euclidean", EngineSettings(backend, 64))


def test_reported_recall_equals_recall_against_exact_answers() -> None:
    space = _space()
    k = 5
    report = engine_report(space, k, seed=7, sample=300)
    _, approx = kneighbors(space, k)
    every = np.arange(space.n)
    _, exact = reference_knn(space.matrix, "euclidean", every, every, k, True)
    rows = report.sampled
    hits = sum(len(set(approx[r]) & set(exact[r])) for r in rows)
    assert report.recall == hits / (len(rows) * k)
    assert report.backend == "approximate" and not report.exact
    assert report.as_dict()["recall_sample"] == 300


def test_same_input_same_answer_and_exact_distances() -> None:
    space = _space(800)
    d1, i1 = kneighbors(space, 4)
    d2, i2 = kneighbors(space, 4)
    assert np.array_equal(i1, i2) and np.array_equal(d1, d2)
    # every returned distance is the exact one (scipy), and rows are ordered by it
    want = np.linalg.norm(space.matrix[:, None, :] - space.matrix[i1], axis=2)
    np.testing.assert_allclose(d1, want, rtol=1e-12)
    assert np.all(np.diff(d1, axis=1) >= 0)
    assert not np.any(i1 == np.arange(space.n)[:, None])


def test_exact_backends_report_recall_one_without_sampling() -> None:
    report = engine_report(_space(300, "fast"), 3)
    assert (report.backend, report.exact, report.recall, len(report.sampled)) == \
        ("fast", True, 1.0, 0)


def test_manhattan_goes_to_the_exact_engine() -> None:
    matrix = np.random.default_rng(32).random((300, 4))
    space = Space.from_matrix(matrix, "manhattan", EngineSettings("approximate", 64))
    report = engine_report(space, 3)
    assert report.backend == "fast" and report.exact
    every = np.arange(300)
    _, pos = kneighbors(space, 3)
    assert np.array_equal(pos, reference_knn(matrix, "manhattan", every, every, 3, True)[1])
