"""CNN, FCNN and RNN keep consistent sets (Hart 1968; Gates 1972; Angiulli 2007).

Consistency is checked with scikit-learn's KNeighborsClassifier(n_neighbors=1)
fitted on the kept rows: it must label every input row with its own label.
"""

from __future__ import annotations

import numpy as np
import pytest
from condensing_fixtures import DATASETS, misclassified_by_kept, scaled

from curate.methods.condensing import cnn, fcnn, rnn
from curate.space import Space

METHODS = {"cnn": cnn, "fcnn": fcnn, "rnn": rnn}


@pytest.mark.parametrize("name", DATASETS)
@pytest.mark.parametrize("method", sorted(METHODS))
def test_kept_rows_are_consistent(name: str, method: str) -> None:
    """Hart 1968's definition of a consistent subset, checked by scikit-learn's 1-NN."""
    X, y = scaled(name)
    sel = METHODS[method](Space.from_matrix(X), y, removable=np.ones(len(y), bool), seed=3)
    assert misclassified_by_kept(X, y, sel.kept).tolist() == []
    assert 0 < len(sel.kept) < len(y)


@pytest.mark.parametrize("name", DATASETS)
def test_rnn_is_a_subset_of_the_cnn_it_started_from(name: str) -> None:
    """Gates 1972: RNN only removes rows from CNN's consistent set."""
    X, y = scaled(name)
    s, everyone = Space.from_matrix(X), np.ones(len(y), bool)
    for order in ("shuffled", "input"):
        condensed = cnn(s, y, removable=everyone, seed=11, order=order)
        reduced = rnn(s, y, removable=everyone, seed=11, order=order)
        assert set(reduced.kept.tolist()) <= set(condensed.kept.tolist())
        assert reduced.info["cnn_kept"] == len(condensed.kept)


@pytest.mark.parametrize("method", ["cnn", "rnn"])
def test_same_seed_same_result_other_seed_still_consistent(method: str) -> None:
    """Same input and seed, same result (curate's contract); any presentation order gives a
    consistent set (Hart 1968), though not the same one."""
    X, y = scaled("wine")
    s, everyone = Space.from_matrix(X), np.ones(len(y), bool)
    first = METHODS[method](s, y, removable=everyone, seed=7)
    again = METHODS[method](s, y, removable=everyone, seed=7)
    assert first.kept.tolist() == again.kept.tolist()
    assert first.kept_as.tolist() == again.kept_as.tolist()
    kept_sets = set()
    for seed in range(4):
        other = METHODS[method](s, y, removable=everyone, seed=seed)
        assert misclassified_by_kept(X, y, other.kept).tolist() == []
        kept_sets.add(tuple(other.kept.tolist()))
    assert len(kept_sets) > 1  # the order matters to CNN (Hart 1968), so the seed is used


def test_fcnn_does_not_depend_on_row_order() -> None:
    """Angiulli 2007: FCNN's result is independent of the order of the training set."""
    X, y = scaled("breast_cancer")
    perm = np.random.default_rng(2).permutation(len(y))
    direct = fcnn(Space.from_matrix(X), y, removable=np.ones(len(y), bool))
    shuffled = fcnn(Space.from_matrix(X[perm]), y[perm], removable=np.ones(len(y), bool))
    assert sorted(perm[shuffled.kept].tolist()) == direct.kept.tolist()


@pytest.mark.parametrize("method", sorted(METHODS))
def test_consistent_under_manhattan_distance(method: str) -> None:
    """Hart 1968's consistency under L1 distance, checked by scikit-learn's 1-NN with
    metric="manhattan"."""
    X, y = scaled("wine")
    s = Space.from_matrix(X, metric="manhattan")
    sel = METHODS[method](s, y, removable=np.ones(len(y), bool), seed=1)
    assert misclassified_by_kept(X, y, sel.kept, metric="manhattan").tolist() == []
