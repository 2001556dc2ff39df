"""All k-NN (Tomek 1976) as published, checked with imbalanced-learn's ENN.

The published rule: a row goes when the vote of its j nearest neighbours
misclassifies it for any j = 1..k, every vote taken on the original set. That
is the union of ENN's removals for j = 1..k, so curate is compared with the
union of imbalanced-learn's EditedNearestNeighbours at each j.

imbalanced-learn 0.14's AllKNN is a different procedure (read in its source):
ENN at j = 1, then at j = 2 on what j = 1 kept, and so on, stopping early when
a class would vanish or fall below the smallest class's size. The two agree
at k = 1 (compared below) and part at larger k (a hand-made case below).
Own-label ties in the majority vote are left out of the comparison as in
test_editing_enn.py: at j = 2 they occur even with two classes.
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
from imblearn.under_sampling import AllKNN, EditedNearestNeighbours

from curate.methods.editing import all_knn

pytestmark = pytest.mark.usefixtures("one_thread")  # see tests/methods/conftest.py

@pytest.mark.parametrize("name", ["wine", "breast_cancer", "digits"])
@pytest.mark.parametrize("flip", [0.0, 0.1])
@pytest.mark.parametrize("vote", ["majority", "unanimous"])
def test_all_knn_is_the_union_of_enn_over_j(name: str, flip: float, vote: str) -> None:
    """Removed rows and their step (the smallest j that removes them) match
    imbalanced-learn's ENN run at every j on the original data."""
    k = 3
    X, y = dataset(name, flip=flip, seed=13)
    ours = all_knn(space(X), y, removable=everyone(len(y)), k=k, vote=vote)
    first = np.zeros(len(y), dtype=np.int64)
    ties = np.zeros(len(y), dtype=bool)
    for j in range(k, 0, -1):
        enn_j = EditedNearestNeighbours(sampling_strategy="all", n_neighbors=j,
                                        kind_sel=KINDS[vote])
        first[sorted(removed_by(enn_j, X, y))] = j
        if vote == "majority":
            ties |= own_label_ties(X, y, j)
    step = np.zeros(len(y), dtype=np.int64)
    step[ours.removed] = ours.step
    assert np.array_equal(step[~ties], first[~ties])
    assert first.any()


@pytest.mark.parametrize("name", ["wine", "breast_cancer"])
def test_all_knn_at_k_1_is_imbalanced_learns_allknn(name: str) -> None:
    """At k = 1 the published rule and imbalanced-learn's successive one coincide."""
    X, y = dataset(name, flip=0.1, seed=17)
    ours = all_knn(space(X), y, removable=everyone(len(y)), k=1)
    theirs = removed_by(AllKNN(sampling_strategy="all", n_neighbors=1, kind_sel="mode"), X, y)
    assert set(ours.removed.tolist()) == theirs


def test_all_knn_votes_on_the_original_set_not_on_what_smaller_k_kept() -> None:
    """Hand-made: 'a' at -1.5, 0, 0.5, 0.6; a stray 'b' at 1.25; 'b' at 10..13.

    Unanimous vote, k = 3. The stray 'b' (row 4) has an 'a' nearest
    neighbour: gone at j = 1. Rows 1, 2 and 3 have it among their 3 nearest
    (hand-computed distances 1.25, 0.75, 0.65), so the published rule removes
    them at j = 3. imbalanced-learn removes row 4 at j = 1 and then votes
    without it, so it keeps rows 1, 2 and 3.
    """
    X = np.array([[-1.5], [0.0], [0.5], [0.6], [1.25], [10.0], [11.0], [12.0], [13.0]])
    y = np.array([0, 0, 0, 0, 1, 1, 1, 1, 1])
    ours = all_knn(space(X), y, removable=everyone(9), k=3, vote="unanimous")
    assert dict(zip(ours.removed.tolist(), ours.step.tolist(), strict=True)) == {
        1: 3, 2: 3, 3: 3, 4: 1}
    theirs = removed_by(AllKNN(sampling_strategy="all", n_neighbors=3, kind_sel="all",
                               allow_minority=True), X, y)
    assert theirs == {4}


def test_all_knn_evidence_is_the_deciding_vote() -> None:
    """A row removed at step j carries its j nearest neighbours (scikit-learn's) as evidence."""
    from sklearn.neighbors import NearestNeighbors

    X, y = dataset("breast_cancer", flip=0.1, seed=19)
    ours = all_knn(space(X), y, removable=everyone(len(y)), k=3)
    _, idx = NearestNeighbors(n_neighbors=3).fit(X).kneighbors(None)
    for pos, step, nbr in zip(ours.removed, ours.step, ours.neighbours, strict=True):
        assert nbr.tolist() == idx[pos, :step].tolist()
        assert (y[nbr] != y[pos]).sum() * 2 > step


def test_all_knn_honours_the_removable_mask() -> None:
    """Rows outside the mask stay and vote: the union of imbalanced-learn's ENN
    over j, given the removable classes as its class list."""
    X, y = dataset("wine", flip=0.1, seed=23)
    ours = all_knn(space(X), y, removable=y != 1, k=3, vote="unanimous")
    theirs: set[int] = set()
    for j in (1, 2, 3):
        theirs |= removed_by(EditedNearestNeighbours(sampling_strategy=[0, 2], n_neighbors=j,
                                                     kind_sel="all"), X, y)
    assert set(ours.removed.tolist()) == theirs
    assert not (y[ours.removed] == 1).any()
