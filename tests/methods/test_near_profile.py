"""distance_profile, the radius helper, against brute-force distances from scipy's cdist.

Its quantiles must be numpy's quantiles of the nearest same-label and
other-label distances computed directly, its counts at each candidate radius
must match counts from the same matrix, and the whole result must survive
``json.dumps`` (the command line prints it).
"""

from __future__ import annotations

import json

import numpy as np
from scipy.spatial.distance import cdist

from curate.methods.duplicates import distance_profile, near_duplicates
from curate.space import Space


def brute(X: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Nearest same-label and nearest other-label distance of every row."""
    dist = cdist(X, X)
    np.fill_diagonal(dist, np.inf)
    same = y[:, None] == y[None, :]
    return np.where(same, dist, np.inf).min(axis=1), np.where(same, np.inf, dist).min(axis=1)


def sample(seed: int) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    X = rng.random((80, 2))
    X[40:60] = X[:20] + rng.normal(0, 0.005, (20, 2))  # jittered re-sends
    y = rng.integers(0, 3, 80)
    y[40:60] = y[:20]
    y[79] = 3  # a label with one row: no same-label neighbour
    return X, y


def test_quantiles_and_counts_match_cdist():
    X, y = sample(0)
    friend, enemy = brute(X, y)
    radii = [0.005, 0.01, 0.05]
    prof = distance_profile(Space.from_matrix(X), y, radii=radii)
    assert json.loads(json.dumps(prof)) == prof
    qs = [float(q) for q in prof["nearest_same_label"]]
    np.testing.assert_allclose(list(prof["nearest_same_label"].values()),
                               np.quantile(friend[np.isfinite(friend)], qs))
    np.testing.assert_allclose(list(prof["nearest_other_label"].values()), np.quantile(enemy, qs))
    assert prof["rows_alone_in_their_label"] == 1
    for cand, r in zip(prof["candidates"], radii, strict=True):
        assert cand["rows_with_same_label_within"] == int((friend <= r).sum())
        assert cand["conflicting_rows"] == int((enemy <= r).sum())
        sel = near_duplicates(Space.from_matrix(X), y, removable=np.ones(80, dtype=bool), radius=r)
        assert cand["would_remove"] == len(sel.removed)


def test_default_radii_are_positive_quantiles_of_the_same_label_distance():
    X, y = sample(1)
    X[5] = X[0]  # an exact copy: a zero distance must not become a candidate radius
    y[5] = y[0]
    friend, _ = brute(X, y)
    prof = distance_profile(Space.from_matrix(X), y)
    radii = [c["radius"] for c in prof["candidates"]]
    picks = np.quantile(friend[np.isfinite(friend)], [0.01, 0.05, 0.1, 0.25])
    assert radii == sorted({float(p) for p in picks if p > 0})
    assert all(r > 0 for r in radii) and json.dumps(prof)
