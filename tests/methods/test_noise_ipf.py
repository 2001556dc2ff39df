"""The iterative partitioning filter (Khoshgoftaar and Rebours 2007).

* One round equals the partition filter computed with scikit-learn: the rows
  in play split by ``StratifiedKFold`` (same seed), one decision tree fitted
  on each part alone, every tree predicting every row, a row flagged when
  more than half (majority) or all (consensus) of them predict another label.
* The stopping rule of the paper: the filter stops once ``quiet_rounds``
  rounds in a row each flag fewer than ``stop_share`` of the rows, and not
  before; each flagged row's ``step`` is its round.

Data: scikit-learn's bundled wine and breast cancer tables (open data shipped
in a package), range-normalised, with 20% of labels flipped (seeded).
"""

from __future__ import annotations

import numpy as np
import open_data
import pytest
from sklearn.model_selection import StratifiedKFold
from sklearn.preprocessing import MinMaxScaler
from sklearn.tree import DecisionTreeClassifier

from curate.methods.noise import ipf
from curate.space import Space


def noisy(name: str, seed: int) -> tuple[np.ndarray, np.ndarray]:
    X, y = open_data.load(name)
    y = np.asarray(y).copy()
    rng = np.random.default_rng(seed)
    chosen = rng.choice(len(y), int(0.2 * len(y)), replace=False)
    k = len(np.unique(y))
    y[chosen] = (y[chosen] + rng.integers(1, k, len(chosen))) % k
    return MinMaxScaler().fit_transform(X), y


def partition_votes(X: np.ndarray, y: np.ndarray, folds: int, seed: int) -> np.ndarray:
    """How many single-part trees misclassify each row (scikit-learn only)."""
    wrong = np.zeros(len(y), dtype=np.int64)
    for _, part in StratifiedKFold(n_splits=folds, shuffle=True, random_state=seed).split(X, y):
        tree = DecisionTreeClassifier(criterion="entropy", min_samples_leaf=2,
                                      random_state=seed).fit(X[part], y[part])
        wrong += tree.predict(X) != y
    return wrong


@pytest.mark.parametrize("vote", ["majority", "consensus"])
@pytest.mark.parametrize("name", ["wine", "breast_cancer"])
def test_one_round_is_the_partition_filter(name, vote) -> None:
    X, y = noisy(name, seed=1)
    wrong = partition_votes(X, y, 5, seed=6)
    expected = wrong > 2.5 if vote == "majority" else wrong == 5
    sel = ipf(Space.from_matrix(X), y, removable=np.ones(len(y), bool), seed=6, folds=5,
              vote=vote, max_rounds=1, models=["tree"])
    assert sel.removed.tolist() == np.flatnonzero(expected).tolist()
    assert set(sel.step.tolist()) <= {1}


@pytest.mark.parametrize(("stop_share", "quiet_rounds"), [(0.01, 3), (0.05, 1), (0.02, 2)])
def test_stops_after_the_papers_quiet_rounds(stop_share, quiet_rounds) -> None:
    X, y = noisy("breast_cancer", seed=2)
    sel = ipf(Space.from_matrix(X), y, removable=np.ones(len(y), bool), seed=0,
              stop_share=stop_share, quiet_rounds=quiet_rounds, max_rounds=50, models=["tree"])
    rounds = sel.info["rounds"]
    per_round = np.bincount(sel.step, minlength=rounds + 1)[1:]
    quiet = per_round < stop_share * len(y)
    assert sel.info["stopped"] == "quiet rounds"
    assert quiet[-quiet_rounds:].all(), "the last rounds were all quiet"
    runs = np.convolve(quiet[:-1].astype(int), np.ones(quiet_rounds, int), mode="valid")
    assert not np.any(runs == quiet_rounds), "it did not stop at an earlier quiet run"
    assert np.all(np.diff(sel.step) >= 0), "records come round by round"


def test_doubt_comes_from_models_that_did_not_see_the_row() -> None:
    """Round one's doubt: mean probability of the own label over the trees of other parts."""
    X, y = noisy("wine", seed=3)
    split = StratifiedKFold(n_splits=5, shuffle=True, random_state=0)
    total = np.zeros(len(y))
    for _, part in split.split(X, y):
        tree = DecisionTreeClassifier(criterion="entropy", min_samples_leaf=2,
                                      random_state=0).fit(X[part], y[part])
        outside = np.setdiff1d(np.arange(len(y)), part)
        total[outside] += tree.predict_proba(X[outside])[np.arange(len(outside)), y[outside]]
    sel = ipf(Space.from_matrix(X), y, removable=np.ones(len(y), bool), seed=0, max_rounds=1,
              models=["tree"])
    np.testing.assert_allclose(sel.scores["doubt"], 1 - total / 4, atol=1e-12)
