"""The neighbour work of an update, against scipy: rows within a per-row distance, and
neighbour lists brought up to date.

The reference is the definition computed with scipy's cdist: for
:func:`within`, every pair at distance <= the query's radius; for lists, each
row's k nearest other rows ordered by distance, then position (ties broken by
the lower position, as everywhere in curate). Data: scikit-learn's bundled
digits (integer pixels, so many distances tie exactly) and wine.
"""

from __future__ import annotations

import numpy as np
import open_data
import pytest
from scipy.spatial.distance import cdist
from sklearn.preprocessing import MinMaxScaler

from curate.neighbours.refresh import refresh_lists
from curate.neighbours.within import within
from curate.settings import EngineSettings
from curate.space import Space

METRICS = {"euclidean": "euclidean", "manhattan": "cityblock"}


def _data(name: str, rows: int, seed: int) -> np.ndarray:
    X = open_data.load(name)[0]
    X = X[:, X.std(axis=0) > 0]
    pick = np.random.default_rng(seed).choice(len(X), rows, replace=False)
    return np.ascontiguousarray(MinMaxScaler().fit_transform(X)[pick])


def _lists(X: np.ndarray, k: int, metric: str) -> tuple[np.ndarray, np.ndarray]:
    """Each row's k nearest other rows by (distance, position), from scipy."""
    d = cdist(X, X, METRICS[metric])
    np.fill_diagonal(d, np.inf)
    order = np.array([np.lexsort((np.arange(len(X)), row))[:k] for row in d])
    return np.take_along_axis(d, order, axis=1), order


@pytest.mark.parametrize("backend", ["fast", "brute"])
@pytest.mark.parametrize("metric", ["euclidean", "manhattan"])
def test_within_finds_every_pair_inside_each_radius(backend: str, metric: str) -> None:
    """Radii set to real distances, so pairs exactly at the radius count (inclusive)."""
    X = _data("digits", 1400, 1)
    space = Space.from_matrix(X, metric, EngineSettings(backend=backend))
    queries, reference = np.arange(0, 1400, 2), np.arange(1, 1400, 2)
    full = cdist(X[queries], X[reference], METRICS[metric])
    radii = np.sort(full, axis=1)[:, 4]
    q, p, d = within(space, radii, queries=queries, reference=reference)
    rows, cols = np.nonzero(full <= radii[:, None])
    assert sorted(zip(q.tolist(), p.tolist(), strict=True)) == \
        sorted(zip(rows.tolist(), reference[cols].tolist(), strict=True))
    assert np.array_equal(d, full[q, np.searchsorted(reference, p)])


@pytest.mark.parametrize("backend", ["fast", "brute"])
@pytest.mark.parametrize("name", ["digits", "wine"])
@pytest.mark.parametrize("metric", ["euclidean", "manhattan"])
def test_refreshed_lists_are_the_lists_of_the_new_rows(name: str, metric: str,
                                                       backend: str) -> None:
    """Rows leave and enter (new rows at the end, one old row back in the middle): every
    list equals scipy's on the new set of rows (with the compiled engine, one pass serves
    the entering rows' own lists and the rows they get near to)."""
    X = _data(name, 170, 2)
    k = 4
    old_rows = np.setdiff1d(np.arange(140), [5, 17, 60, 61])
    new_rows = np.setdiff1d(np.arange(170), [3, 17, 90, 91, 92])
    old_d, old_i = _lists(X[old_rows], k, metric)
    space = Space.from_matrix(X[new_rows], metric, EngineSettings(backend=backend))
    dist, nbr, changes = refresh_lists(space, new_rows, old_rows, old_d, old_rows[old_i])
    want_d, want_i = _lists(X[new_rows], k, metric)
    assert np.array_equal(nbr, want_i) and np.array_equal(dist, want_d)
    assert len(changes.merged) and len(changes.lost)
