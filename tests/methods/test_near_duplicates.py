"""Near copies (leader scheme) against brute-force pairwise distances from scipy's cdist.

What curate guarantees (module docstring of curate.methods.duplicates), each
checked here against ``cdist``:
- every removed copy is within the radius of its ``kept_as``, which is kept
  and has the same label;
- no two kept rows of the same label are within the radius of each other,
  unless neither may be removed;
- the kept set is the one a greedy pass in position order builds (a row
  leaves if a kept row of its label is within the radius, else it is kept),
  which is the obvious slow version of the scheme, and ``kept_as`` is the
  nearest such row (ties to the lower position);
- conflicting rows are exactly the rows with another-label row within the
  radius (common practice, no source, for the notion itself).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.spatial.distance import cdist

from curate.errors import UsageError
from curate.methods import METHODS
from curate.methods.duplicates import near_duplicates
from curate.settings import check_params
from curate.space import Space


def jittered(seed: int, n: int = 120) -> tuple[np.ndarray, np.ndarray]:
    """Rows drawn around a few centres, so that many fall within a small radius."""
    rng = np.random.default_rng(seed)
    centres = rng.random((n // 4, 3))
    X = centres[rng.integers(0, len(centres), n)] + rng.normal(0, 0.02, (n, 3))
    return X, rng.integers(0, 2, n)


def greedy(dist: np.ndarray, y: np.ndarray, radius: float, removable: np.ndarray,
           alive: np.ndarray) -> set[int]:
    """The slow leader pass: fixed rows lead from the start, others in position order."""
    leaders = set(np.flatnonzero(alive & ~removable).tolist())
    for i in np.flatnonzero(alive & removable):
        if not any(dist[i, j] <= radius and y[j] == y[i] for j in leaders):
            leaders.add(int(i))
    return leaders


@pytest.mark.parametrize(("seed", "radius", "metric"),
                         [(0, 0.03, "euclidean"), (1, 0.06, "euclidean"), (2, 0.05, "manhattan"),
                          (3, 0.1, "euclidean")])
@pytest.mark.parametrize("conflicts", ["report", "drop"])
def test_leader_scheme_against_cdist(seed, radius, metric, conflicts):
    X, y = jittered(seed)
    n = len(y)
    removable = np.random.default_rng(seed).random(n) > 0.1
    dist = cdist(X, X, "cityblock" if metric == "manhattan" else "euclidean")
    sel = near_duplicates(Space.from_matrix(X, metric=metric), y, removable=removable,
                          radius=radius, conflicts=conflicts)
    near = dist <= radius
    np.fill_diagonal(near, False)
    conflicted = (near & (y[:, None] != y[None, :])).any(axis=1)
    assert set(np.concatenate(sel.groups).tolist() if sel.groups else []) == set(
        np.flatnonzero(conflicted).tolist())
    assert sel.info["conflicting_rows"] == int(conflicted.sum())
    kept = set(sel.kept.tolist())
    alive = ~(conflicted & removable) if conflicts == "drop" else np.ones(n, dtype=bool)
    assert kept == greedy(dist, y, radius, removable, alive)
    for p, r, j in zip(sel.removed, sel.reason, sel.kept_as, strict=True):
        assert removable[p]
        if r == "near-copy":
            assert j in kept and y[j] == y[p] and dist[p, j] <= radius
            earlier = [c for c in sorted(kept) if (c < p or not removable[c]) and y[c] == y[p]]
            assert j == min(earlier, key=lambda c: (dist[p, c], c))
        else:
            assert conflicts == "drop" and conflicted[p] and j == -1
    same = near & (y[:, None] == y[None, :])
    for a, b in zip(*np.nonzero(same), strict=True):
        assert not (a in kept and b in kept and (removable[a] or removable[b]))


def test_no_chaining():
    """Rows 0.06 apart in a line with radius 0.1: a leader never reaches past its radius."""
    X = np.arange(6, dtype=float)[:, None] * 0.06
    sel = near_duplicates(Space.from_matrix(X), np.zeros(6, dtype=int),
                          removable=np.ones(6, dtype=bool), radius=0.1)
    dist = cdist(X, X)
    assert all(dist[p, j] <= 0.1 for p, j in zip(sel.removed, sel.kept_as, strict=True))
    assert len(sel.kept) > 1


def test_radius_is_required_and_positive():
    X, y = jittered(4, 20)
    with pytest.raises(UsageError, match="radius"):
        near_duplicates(Space.from_matrix(X), y, removable=np.ones(20, dtype=bool))
    for bad in (0, -0.1, "0.1"):
        with pytest.raises(UsageError, match="radius"):
            check_params(METHODS["near-duplicates"], {"radius": bad})
    with pytest.raises(UsageError, match="conflicts"):
        check_params(METHODS["near-duplicates"], {"radius": 0.1, "conflicts": "keep"})
