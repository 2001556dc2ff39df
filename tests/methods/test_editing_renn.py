"""RENN (Tomek 1976: ENN repeated until nothing changes) against imbalanced-learn.

imbalanced-learn 0.14's RepeatedEditedNearestNeighbours repeats its ENN on
what the last round kept, as curate does, but it also stops after a round in
which any class other than the smallest falls below the smallest class's
original size, or a class vanishes. The published RENN has no such rule, and
curate has none; so curate is compared with ``max_rounds`` set to the number
of rounds imbalanced-learn ran (``n_iter_``), and a separate check confirms
that where imbalanced-learn ran fewer rounds, its class-size rule was why.

With ``kind_sel="mode"`` ties in the vote (3+ classes, see
test_editing_enn.py) would send the two runs apart in later rounds, so for
the majority vote on wine and digits the rows that meet such a tie along the
way are left out of the input first; ties are tested on their own there.
"""

from __future__ import annotations

from collections import Counter

import numpy as np
import pytest
from editing_fixtures import (
    KINDS,
    dataset,
    drop_rows,
    everyone,
    neighbour_labels,
    own_label_ties,
    removed_by,
    space,
)
from imblearn.under_sampling import EditedNearestNeighbours, RepeatedEditedNearestNeighbours

from curate.methods.editing import renn

pytestmark = pytest.mark.usefixtures("one_thread")  # see tests/methods/conftest.py

def tie_rows_along_the_way(X: np.ndarray, y: np.ndarray, k: int) -> np.ndarray:
    """Rows that meet an own-label tie (scikit-learn's neighbours) in some RENN round."""
    sel = renn(space(X), y, removable=everyone(len(y)), k=k)
    found: list[int] = []
    for r in range(1, sel.info["rounds"] + 1):
        alive = np.setdiff1d(np.arange(len(y)), sel.removed[sel.step < r])
        found.extend(alive[own_label_ties(X[alive], y[alive], k)].tolist())
    return np.unique(np.asarray(found, dtype=np.int64))


def tie_free(X: np.ndarray, y: np.ndarray, k: int) -> tuple[np.ndarray, np.ndarray]:
    """Leave out rows that meet a tie until a whole RENN run meets none."""
    for _ in range(10):
        ties = tie_rows_along_the_way(X, y, k)
        if len(ties) == 0:
            return X, y
        X, y = drop_rows(X, y, ties)
    raise AssertionError("could not make the data tie-free in 10 passes")


@pytest.mark.parametrize("name", ["wine", "breast_cancer", "digits"])
@pytest.mark.parametrize("flip", [0.0, 0.1])
@pytest.mark.parametrize("vote", ["majority", "unanimous"])
def test_renn_keeps_what_imbalanced_learn_keeps(name: str, flip: float, vote: str) -> None:
    """Same kept rows as imbalanced-learn, run for the same number of rounds."""
    k = 3
    X, y = dataset(name, flip=flip, seed=11)
    if vote == "majority" and len(np.unique(y)) > 2:  # two classes, odd k: no ties
        X, y = tie_free(X, y, k)
    ref = RepeatedEditedNearestNeighbours(sampling_strategy="all", n_neighbors=k,
                                          kind_sel=KINDS[vote], max_iter=100)
    theirs = removed_by(ref, X, y)
    ours = renn(space(X), y, removable=everyone(len(y)), k=k, vote=vote, max_rounds=ref.n_iter_)
    assert set(ours.removed.tolist()) == theirs
    free = renn(space(X), y, removable=everyone(len(y)), k=k, vote=vote)
    if free.info["rounds"] > ref.n_iter_:
        # imbalanced-learn's own stopping rule, read in its source: a class
        # other than the smallest fell below the smallest's size, or vanished.
        before, after = Counter(y.tolist()), Counter(np.delete(y, sorted(theirs)).tolist())
        smallest = min(before, key=before.__getitem__)
        assert (len(after) < len(before)
                or any(n < before[smallest] for c, n in after.items() if c != smallest))


def test_renn_rounds_follow_the_definition() -> None:
    """Each round's removals are what the k-NN vote among the rows then kept outvotes,
    and the kept rows are a fixed point: none is outvoted (Tomek 1976).

    Neighbours come from scikit-learn's NearestNeighbors; breast cancer has
    two classes, so with k = 3 no vote ties.
    """
    X, y = dataset("breast_cancer", flip=0.1, seed=5)
    sel = renn(space(X), y, removable=everyone(len(y)), k=3)
    assert sel.info["stopped"] == "no change"
    for r in range(1, sel.info["rounds"] + 1):
        alive = np.setdiff1d(np.arange(len(y)), sel.removed[sel.step < r])
        votes = neighbour_labels(X[alive], y[alive], 3)
        outvoted = alive[(votes != y[alive][:, None]).sum(axis=1) >= 2]
        assert sorted(sel.removed[sel.step == r].tolist()) == outvoted.tolist()
    assert sel.step.max() == sel.info["rounds"] - 1


def test_one_round_is_enn() -> None:
    """RENN stopped after one round removes what imbalanced-learn's ENN removes."""
    X, y = dataset("breast_cancer", flip=0.1, seed=2)
    ours = renn(space(X), y, removable=everyone(len(y)), k=3, max_rounds=1)
    theirs = removed_by(EditedNearestNeighbours(sampling_strategy="all", kind_sel="mode"), X, y)
    assert set(ours.removed.tolist()) == theirs
    assert ours.info["stopped"] == "max_rounds"
    assert set(ours.step.tolist()) == {1}


def test_renn_honours_the_removable_mask() -> None:
    """Rows outside the mask stay and vote, like imbalanced-learn with a class list."""
    X, y = dataset("wine", flip=0.1, seed=4)
    removable = np.isin(y, [0, 1])
    ref = RepeatedEditedNearestNeighbours(sampling_strategy=[0, 1], kind_sel="all")
    theirs = removed_by(ref, X, y)
    ours = renn(space(X), y, removable=removable, vote="unanimous", max_rounds=ref.n_iter_)
    assert set(ours.removed.tolist()) == theirs
    assert removable[ours.removed].all()


def test_renn_stops_when_too_few_rows_are_left() -> None:
    """Rows at 0, 1, 4, 9, 16, 25 with alternating labels: at k = 1 every row's
    nearest neighbour has the other label (hand-computed), so round 1 removes
    all six and no second round can run."""
    X = np.arange(6, dtype=float)[:, None] ** 2
    y = np.array([0, 1, 0, 1, 0, 1])
    sel = renn(space(X), y, removable=everyone(6), k=1)
    assert sorted(sel.removed.tolist()) == [0, 1, 2, 3, 4, 5]
    assert sel.info == {"rounds": 1, "stopped": "too few rows"}
