"""The neighbourhood cleaning rule (Laurikkala 2001) against imbalanced-learn.

The paper (its pseudo-code is quoted in imbalanced-learn issue #764): C is
the class of interest, O the other rows; A1 = the rows of O that ENN (k = 3)
removes; A2 = the rows of O among the 3 nearest neighbours of a row of C that
those neighbours misclassify, from classes Ci with |Ci| >= 0.5 |C|; remove
A1 and A2.

imbalanced-learn 0.14's NeighbourhoodCleaningRule differs in ways read in
its source: (1) with ``sampling_strategy="all"`` its ENN also edits C and its
A2 also takes C's own rows; ``"not minority"`` gives the paper's O. (2) it
decides whether a row of C is misclassified with a KNeighborsClassifier
fitted on all rows and asked about that same row, so the row votes for
itself among its k. The comparison plugs in a scikit-learn classifier whose
prediction for a training row leaves the row out (scikit-learn's own
``predict(None)``). (3) it cleans classes with strictly more than threshold
times |C| rows (the paper: at least). Vote ties in 3+ classes are left out of
the comparison as in test_editing_enn.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from editing_fixtures import (
    dataset,
    everyone,
    own_label_ties,
    removed_by,
    space,
)
from imblearn.under_sampling import EditedNearestNeighbours, NeighbourhoodCleaningRule
from sklearn.neighbors import KNeighborsClassifier, NearestNeighbors

from curate.errors import UsageError
from curate.methods.cleaning import ncr

pytestmark = pytest.mark.usefixtures("one_thread")  # see tests/methods/conftest.py


class LeaveSelfOut(KNeighborsClassifier):
    """scikit-learn's k-NN classifier; a training row asked about is voted on without itself."""

    def predict(self, X: np.ndarray) -> np.ndarray:
        dist, pos = self.kneighbors(X, n_neighbors=1)
        assert (dist < 1e-6).all(), "asked about a row that is not a training row"
        return super().predict(None)[pos[:, 0]]


def paper_ncr(k: int, threshold: float = 0.5) -> NeighbourhoodCleaningRule:
    """imbalanced-learn's NCR set up to compute the paper's rule (see the module docstring)."""
    return NeighbourhoodCleaningRule(
        sampling_strategy="not minority",
        edited_nearest_neighbours=EditedNearestNeighbours(
            sampling_strategy="not minority", n_neighbors=k, kind_sel="mode"),
        n_neighbors=LeaveSelfOut(n_neighbors=k), threshold_cleaning=threshold)


def tie_touched(X: np.ndarray, y: np.ndarray, k: int) -> np.ndarray:
    """Rows whose fate a vote tie can decide: tie rows and the neighbours of C's tie rows."""
    ties = own_label_ties(X, y, k)
    sizes = np.bincount(y)
    interest = np.flatnonzero(ties & (y == np.argmin(sizes)))
    nbr = NearestNeighbors(n_neighbors=k).fit(X).kneighbors(None, return_distance=False)
    touched = ties.copy()
    touched[nbr[interest].ravel()] = True
    return touched


@pytest.mark.parametrize("name", ["wine", "breast_cancer", "digits"])
@pytest.mark.parametrize("flip", [0.0, 0.1])
@pytest.mark.parametrize("k", [3, 5])
def test_ncr_removes_what_imbalanced_learn_removes(name: str, flip: float, k: int) -> None:
    """Same removals as imbalanced-learn set up for the paper's rule, tie rows apart."""
    X, y = dataset(name, flip=flip, seed=41)
    sizes = np.bincount(y)
    assert (sizes == sizes.min()).sum() == 1, "the smallest class must be unique here"
    ours = ncr(space(X), y, removable=everyone(len(y)), k=k)
    theirs = removed_by(paper_ncr(k), X, y)
    fair = set(np.flatnonzero(~tie_touched(X, y, k)).tolist())
    assert set(ours.removed.tolist()) & fair == theirs & fair
    assert not (y[ours.removed] == np.argmin(sizes)).any()
    assert ours.info["interest"] == str(np.argmin(sizes))
    if flip:
        assert "crowds-interest" in ours.reason


def test_ncr_never_removes_the_class_of_interest_unlike_sampling_strategy_all() -> None:
    """The paper edits O only; imbalanced-learn's "all" also removes rows of C."""
    X, y = dataset("wine", flip=0.1, seed=43)
    smallest = np.argmin(np.bincount(y))
    ours = ncr(space(X), y, removable=everyone(len(y)))
    theirs = removed_by(NeighbourhoodCleaningRule(sampling_strategy="all"), X, y)
    assert not (y[ours.removed] == smallest).any()
    assert (y[sorted(theirs)] == smallest).any()


def test_a_row_of_interest_does_not_vote_for_itself() -> None:
    """Hand-made: class 1 (3 rows, the smallest) at 0, -1, -2; class 0 at 1.4..3.0.

    Row 0's 3 nearest neighbours are rows 1 (class 1), 3 and 4 (class 0), at
    1.0, 1.4 and 1.8: outvoted 2 to 1, so the paper removes rows 3 and 4 (A2).
    imbalanced-learn's default counts row 0's own vote with its 2 nearest
    (1, 1, 0), finds it correctly classified, and removes nothing.
    """
    X = np.array([[0.0], [-1.0], [-2.0], [1.4], [1.8], [2.2], [2.6], [3.0]])
    y = np.array([1, 1, 1, 0, 0, 0, 0, 0])
    ours = ncr(space(X), y, removable=everyone(len(y)), k=3)
    assert ours.removed.tolist() == [3, 4]
    assert ours.reason == ["crowds-interest", "crowds-interest"]
    assert [n.tolist() for n in ours.neighbours] == [[0], [0]]
    assert [d.tolist() for d in ours.distances] == [[1.4], [1.8]]
    assert removed_by(paper_ncr(3), X, y) == {3, 4}
    assert removed_by(NeighbourhoodCleaningRule(n_neighbors=3), X, y) == set()


def three_classes() -> tuple[np.ndarray, np.ndarray]:
    """'c' (4 rows) at 0, -1, -2, -3; 'b' (2 rows) at 1.4, 1.8; 'a' (6 rows) at 3..8."""
    X = np.array([[0.0], [-1.0], [-2.0], [-3.0], [1.4], [1.8]] + [[v] for v in range(3, 9)])
    return X, np.array(["c"] * 4 + ["b"] * 2 + ["a"] * 6)


@pytest.mark.parametrize(("threshold", "expected"), [(0.5, [4, 5, 6]), (0.6, [6])])
def test_a_class_of_exactly_threshold_times_the_interest_is_cleaned(
        threshold: float, expected: list[int]) -> None:
    """The paper cleans classes with |Ci| >= 0.5 |C| (imbalanced-learn: strictly more).

    Hand-computed with interest 'c': row 0 ('c') has neighbours 'c', 'b', 'b'
    and is outvoted, so rows 4 and 5 ('b', 2 = 0.5 x 4 rows) go at 0.5, not
    at 0.6. Row 6 ('a' at 3, neighbours 'a' at 4, 'b' at 1.8 and 1.4) goes
    through ENN either way; rows 4 and 5 tie 1-1-1 in ENN and stay there.
    """
    X, y = three_classes()
    ours = ncr(space(X), y, removable=everyone(len(y)), k=3, threshold=threshold,
               interest="c")
    assert ours.removed.tolist() == expected
    assert ours.reason[-1] == "knn-disagrees"


def test_the_class_of_interest_by_name() -> None:
    """Naming the smallest class is the default; a label not in the stage is a usage error."""
    X, y = dataset("wine", flip=0.1, seed=47)
    default = ncr(space(X), y, removable=everyone(len(y)))
    named = ncr(space(X), y, removable=everyone(len(y)), interest=int(np.argmin(np.bincount(y))))
    assert default.removed.tolist() == named.removed.tolist()
    with pytest.raises(UsageError, match="not among the stage's labels"):
        ncr(space(X), y, removable=everyone(len(y)), interest="7")


def test_ncr_honours_the_removable_mask() -> None:
    """Like imbalanced-learn given the removable classes as its list (minority excluded)."""
    X, y = dataset("wine", flip=0.1, seed=53)
    smallest = int(np.argmin(np.bincount(y)))
    keep_class = [c for c in (0, 1, 2) if c != smallest][0]
    removable = y != keep_class
    ours = ncr(space(X), y, removable=removable, k=3)
    allowed = [c for c in (0, 1, 2) if c not in (smallest, keep_class)]
    theirs = removed_by(NeighbourhoodCleaningRule(
        sampling_strategy=allowed,
        edited_nearest_neighbours=EditedNearestNeighbours(sampling_strategy=allowed,
                                                          kind_sel="mode"),
        n_neighbors=LeaveSelfOut(n_neighbors=3)), X, y)
    fair = set(np.flatnonzero(~tie_touched(X, y, 3)).tolist())
    assert set(ours.removed.tolist()) & fair == theirs & fair
    assert theirs & fair
    assert removable[ours.removed].all()
