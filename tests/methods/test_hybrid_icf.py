"""ICF against its published definition (Brighton and Mellish 2002).

Phase 1 is Wilson editing repeated until nothing changes: checked against
imbalanced-learn's EditedNearestNeighbours (k=3, every class) applied again
and again to what it kept. Phase 2 is checked round by round with sets
computed directly from a scipy ``cdist`` matrix: the local set of x holds
the rows closer to x than its nearest enemy; Reachable(x) is that set,
Coverage(x) the rows whose local set holds x; a round removes (at once)
every row with |Reachable| > |Coverage|, and rounds stop when none is left.
"""

from __future__ import annotations

import numpy as np
import pytest
from editing_fixtures import dataset, drop_rows, own_label_ties, removed_by
from imblearn.under_sampling import EditedNearestNeighbours
from scipy.spatial.distance import cdist

from curate.methods.hybrid import icf
from curate.space import Space


def reach_and_cover(X: np.ndarray, y: np.ndarray, rows: np.ndarray) -> tuple[dict, dict]:
    """|Reachable| and |Coverage| of every row in ``rows``, from pairwise distances."""
    dist = cdist(X[rows], X[rows])
    same = y[rows][:, None] == y[rows][None, :]
    enemy = np.where(same, np.inf, dist).min(axis=1)
    local = (dist < enemy[:, None]) & ~np.eye(len(rows), dtype=bool)
    return (dict(zip(rows.tolist(), local.sum(axis=1).tolist(), strict=True)),
            dict(zip(rows.tolist(), local.sum(axis=0).tolist(), strict=True)))


def check_rounds(X: np.ndarray, y: np.ndarray, removable: np.ndarray) -> None:
    """Replay curate's ICF rounds and compare each with the definition."""
    sel = icf(Space.from_matrix(X), y, removable=removable)
    reason = np.asarray(sel.reason)
    noise_steps = set(sel.step[reason == "noise"].tolist())
    rows = np.setdiff1d(np.arange(len(y)), sel.removed[reason == "noise"])
    for step in sorted(set(sel.step[reason == "reachable"].tolist())) + [None]:
        assert step is None or step not in noise_steps
        reach, cover = reach_and_cover(X, y, rows)
        expected = {r for r in rows.tolist() if removable[r] and reach[r] > cover[r]}
        got = set(sel.removed[sel.step == step].tolist()) if step is not None else set()
        assert got == expected, f"round at step {step}"
        rows = np.setdiff1d(rows, list(got))
    assert set(rows.tolist()) == set(sel.kept.tolist())


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_rounds_follow_the_definition_on_random_data(seed):
    rng = np.random.default_rng(seed)
    y = rng.integers(0, 3, 150)
    X = rng.normal(size=(150, 3)) + 1.5 * np.eye(3)[y]
    check_rounds(X, y, rng.random(150) > 0.15)


def test_rounds_follow_the_definition_on_wine():
    X, y = dataset("wine")
    check_rounds(X, y, np.ones(len(y), dtype=bool))


def repeated_enn(X: np.ndarray, y: np.ndarray) -> set[int]:
    """imbalanced-learn's ENN applied to what it kept until it removes nothing."""
    alive = np.arange(len(y))
    while True:
        gone = removed_by(EditedNearestNeighbours(sampling_strategy="all", n_neighbors=3,
                                                  kind_sel="mode"), X[alive], y[alive])
        if not gone:
            return set(range(len(y))) - set(alive.tolist())
        alive = np.delete(alive, sorted(gone))


@pytest.mark.parametrize("name", ["wine", "breast_cancer"])
def test_noise_phase_is_enn_repeated_until_stable(name):
    """Rows where an own-label vote tie lets the libraries differ are left out first."""
    X, y = dataset(name)
    X, y = drop_rows(X, y, np.flatnonzero(own_label_ties(X, y, 3)))
    sel = icf(Space.from_matrix(X), y, removable=np.ones(len(y), dtype=bool))
    noise = {int(p) for p, r in zip(sel.removed, sel.reason, strict=True) if r == "noise"}
    assert noise == repeated_enn(X, y)


def test_evidence_is_the_nearest_part_of_the_local_set():
    X, y = dataset("wine")
    sel = icf(Space.from_matrix(X), y, removable=np.ones(len(y), dtype=bool))
    dist = cdist(X, X)
    for p, r, nb, d in zip(sel.removed, sel.reason, sel.neighbours, sel.distances, strict=True):
        if r == "reachable":
            assert len(nb) > 0 and (y[nb] == y[p]).all()
            np.testing.assert_allclose(d, dist[p, nb])
            assert (np.diff(d) >= 0).all()
