"""The approximate backend: seeded, exact distances for what it returns, honest recall.

Outside references: the exact answer from scipy's cdist (neighbour_fixtures)
and the definition of recall (share of the true k nearest that were returned;
common practice for approximate search, no single source).
"""

from __future__ import annotations

import numpy as np
import pytest
from neighbour_fixtures import reference_knn

from curate.neighbours import engine_report, kneighbors, recording
from curate.neighbours._approx import INDEX_SEED, RECALL_SAMPLE, approximate_kneighbors, sample_queries
from curate.neighbours._plan import make_request, plan_for
from curate.settings import EngineSettings
from curate.space import Space


def _space(rows: int = 1500, backend: str = "approximate", target: float = 0.99,
           dims: int = 12) -> Space:
    matrix = np.random.default_rng(31).normal(size=(rows, dims))
    return Space.from_matrix(matrix, "euclidean", EngineSettings(backend, 64,
                                                                recall_target=target))


def _recall(approx: np.ndarray, exact: np.ndarray, rows: np.ndarray, k: int) -> float:
    return sum(len(set(approx[r]) & set(exact[r])) for r in rows) / (len(rows) * k)


def test_recorded_recall_is_the_recall_of_the_answers_on_the_sample() -> None:
    space = _space(target=0.9)
    k = 5
    with recording() as calls:
        _, approx = kneighbors(space, k)
    every = np.arange(space.n)
    _, exact = reference_knn(space.matrix, "euclidean", every, every, k, True)
    (call,) = calls
    rows = sample_queries(space.n, RECALL_SAMPLE, INDEX_SEED)
    assert call.backend == "approximate" and call.sample == len(rows) == RECALL_SAMPLE
    assert call.recall == _recall(approx, exact, rows, k)
    # the target was met on the sample, and the whole answer is close to it
    assert call.recall >= 0.9
    assert _recall(approx, exact, every, k) >= 0.85
    assert 0 < call.probes <= call.lists


@pytest.mark.parametrize("target", [0.5, 0.9, 0.99, 1.0])
def test_more_recall_asked_means_more_cells_probed_and_the_target_met(target: float) -> None:
    space = _space(2000, target=target)
    with recording() as calls:
        kneighbors(space, 3)
    assert calls[0].recall >= target
    if target == 1.0:
        every = np.arange(space.n)
        rows = sample_queries(space.n, RECALL_SAMPLE, INDEX_SEED)
        _, got = kneighbors(space, 3)
        want = reference_knn(space.matrix, "euclidean", rows, every, 3, True)[1]
        assert np.array_equal(got[rows], want)


def test_probes_grow_with_the_target() -> None:
    probes = []
    for target in (0.5, 0.99):
        with recording() as calls:
            kneighbors(_space(2000, target=target), 3)
        probes.append(calls[0].probes)
    assert probes[0] < probes[1]


def test_same_input_same_answer_and_exact_distances() -> None:
    space = _space(800)
    d1, i1 = kneighbors(space, 4)
    d2, i2 = kneighbors(space, 4)
    assert np.array_equal(i1, i2) and np.array_equal(d1, d2)
    # every returned distance is the exact one, and rows are ordered by it
    want = np.linalg.norm(space.matrix[:, None, :] - space.matrix[i1], axis=2)
    np.testing.assert_allclose(d1, want, rtol=1e-12)
    assert np.all(np.diff(d1, axis=1) >= 0)
    assert not np.any(i1 == np.arange(space.n)[:, None])


def test_threads_and_memory_do_not_change_the_answer() -> None:
    matrix = np.random.default_rng(5).normal(size=(3000, 8))
    req = make_request(matrix, "euclidean", None, None, True)
    answers = [approximate_kneighbors(req, 4, plan_for(memory, 3000, 3000, 8, 4, threads=t),
                                      0.95)
               for memory, t in ((64, 1), (64, 2), (1, 2))]
    for d, i, r in answers[1:]:
        assert np.array_equal(i, answers[0][1]) and np.array_equal(d, answers[0][0])
        assert r.recall == answers[0][2].recall and r.probes == answers[0][2].probes


def test_few_rows_and_k_near_the_row_count_return_every_row() -> None:
    space = _space(12, dims=3)
    _, pos = kneighbors(space, 11)
    every = np.arange(12)
    assert np.array_equal(np.sort(pos, axis=1), np.array([np.delete(every, r) for r in every]))


def test_queries_and_reference_subsets_and_planted_ties() -> None:
    # lattice points: many exact ties. At target 1.0 the sampled queries get the exact k
    # nearest distances (scipy's cdist, neighbour_fixtures); which of several tied rows
    # is returned may differ, so the rows are ordered by (distance, position) among
    # themselves but compared by distance.
    from neighbour_fixtures import tied_matrix

    matrix = tied_matrix(4, rows=600, dims=3)
    space = Space.from_matrix(matrix, "euclidean", EngineSettings("approximate", 64,
                                                                  recall_target=1.0))
    queries, reference = np.arange(0, 600, 3), np.arange(1, 600, 2)
    d, i = kneighbors(space, 4, queries=queries, reference=reference)
    want, _ = reference_knn(matrix, "euclidean", queries, reference, 4, True)
    rows = sample_queries(len(queries), RECALL_SAMPLE, INDEX_SEED)
    assert np.array_equal(d[rows], want[rows])
    assert np.all(np.isin(i, reference)) and not np.any(i == queries[:, None])
    same = d[:, 1:] == d[:, :-1]
    assert np.all(i[:, 1:][same] > i[:, :-1][same])


def test_engine_report_measures_what_the_query_measures() -> None:
    space = _space(1500)
    report = engine_report(space, 5, seed=INDEX_SEED, sample=RECALL_SAMPLE)
    with recording() as calls:
        kneighbors(space, 5)
    assert report.backend == "approximate" and not report.exact
    assert report.recall == calls[0].recall
    assert report.as_dict()["recall_sample"] == RECALL_SAMPLE


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
