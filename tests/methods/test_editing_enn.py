"""ENN (Wilson 1972) against imbalanced-learn's EditedNearestNeighbours.

imbalanced-learn 0.14 judges each row by its k nearest other rows found with
scikit-learn, like curate. ``kind_sel="all"`` is curate's ``vote="unanimous"``;
``kind_sel="mode"`` is ``vote="majority"`` except where the row's own label
ties for the most votes: scipy's mode then picks the smallest tied label, so
imbalanced-learn removes the row unless its label is that one, while curate
keeps it (the k-NN rule does not misclassify it). Those rows are compared on
their own, with hand-made data.
"""

from __future__ import annotations

import numpy as np
import pytest
from editing_fixtures import (
    KINDS,
    dataset,
    everyone,
    own_label_ties,
    removed_by,
    space,
)
from imblearn.under_sampling import EditedNearestNeighbours

from curate.methods.editing import enn

pytestmark = pytest.mark.usefixtures("one_thread")  # see tests/methods/conftest.py

@pytest.mark.parametrize("name", ["wine", "breast_cancer"])
@pytest.mark.parametrize("flip", [0.0, 0.1])
@pytest.mark.parametrize("vote", ["majority", "unanimous"])
@pytest.mark.parametrize("k", [3, 5])
def test_enn_removes_what_imbalanced_learn_removes(name: str, flip: float, vote: str,
                                                   k: int) -> None:
    """Same removals as imbalanced-learn on bundled scikit-learn data, tie rows apart."""
    X, y = dataset(name, flip=flip, seed=7)
    ours = enn(space(X), y, removable=everyone(len(y)), k=k, vote=vote)
    theirs = removed_by(EditedNearestNeighbours(sampling_strategy="all", n_neighbors=k,
                                                kind_sel=KINDS[vote]), X, y)
    ties = own_label_ties(X, y, k) if vote == "majority" else np.zeros(len(y), bool)
    tie_free = set(np.flatnonzero(~ties).tolist())
    assert set(ours.removed.tolist()) & tie_free == theirs & tie_free
    assert not set(ours.removed.tolist()) & set(np.flatnonzero(ties).tolist())
    assert len(theirs) > 0


def test_enn_keeps_a_row_whose_label_ties_for_the_most_votes() -> None:
    """A 1-1-1 vote among three classes at k = 3 is no majority against the row.

    Row 0 (label 2 at 0) has neighbours labelled 0, 1, 2 at 1, 2, 3
    (hand-computed). The k-NN rule (Wilson 1972) cannot name a winner, so
    curate keeps it; imbalanced-learn's mode picks the smallest label, 0, and
    removes it. With a unanimous vote the row goes in both.
    """
    X = np.array([[0.0], [1.0], [2.0], [3.0], [20.0], [21.0], [22.0], [23.0]])
    y = np.array([2, 0, 1, 2, 0, 0, 0, 0])
    majority = enn(space(X), y, removable=everyone(8), k=3, vote="majority")
    assert 0 not in majority.removed.tolist()
    assert 0 in removed_by(EditedNearestNeighbours(sampling_strategy="all", kind_sel="mode"), X, y)
    unanimous = enn(space(X), y, removable=everyone(8), k=3, vote="unanimous")
    assert 0 in unanimous.removed.tolist()


def test_enn_removes_a_row_outvoted_two_to_one_among_three_classes() -> None:
    """Neighbours 'b', 'b', 'c' outvote an 'a' row (hand-computed)."""
    X = np.array([[0.0], [1.0], [1.5], [3.0], [20.0], [21.0], [22.0], [23.0]])
    y = np.array(["a", "b", "b", "c", "a", "a", "a", "a"])
    sel = enn(space(X), y, removable=everyone(8), k=3)
    assert 0 in sel.removed.tolist()
    record = sel.removed.tolist().index(0)
    assert sel.neighbours[record].tolist() == [1, 2, 3]
    assert "2 of its 3 nearest neighbours are labelled 'b'" in sel.detail[record]


def test_enn_honours_the_removable_mask() -> None:
    """Rows outside the mask stay but still vote, like imbalanced-learn with a class list."""
    X, y = dataset("wine", flip=0.1, seed=3)
    removable = np.isin(y, [0, 2])
    ours = enn(space(X), y, removable=removable, k=3, vote="unanimous")
    theirs = removed_by(EditedNearestNeighbours(sampling_strategy=[0, 2], kind_sel="all"), X, y)
    assert set(ours.removed.tolist()) == theirs
    assert removable[ours.removed].all()
    everyone_removed = enn(space(X), y, removable=everyone(len(y)), k=3, vote="unanimous")
    assert set(ours.removed.tolist()) == {i for i in everyone_removed.removed.tolist()
                                          if removable[i]}
