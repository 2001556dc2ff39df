"""Tomek links (Tomek 1976) against their definition and imbalanced-learn's TomekLinks.

Definition: rows i and j form a link when each is the other's nearest
neighbour and their labels differ. imbalanced-learn 0.14's TomekLinks with
``sampling_strategy="all"`` removes both members of every link, as curate's
``remove="both"`` does; with ``"auto"`` (every class but the smallest) on two
classes it removes the larger class's member, as ``remove="larger"`` does.
"""

from __future__ import annotations

import numpy as np
import pytest
from editing_fixtures import (
    dataset,
    everyone,
    removed_by,
    space,
)
from imblearn.under_sampling import TomekLinks
from sklearn.neighbors import NearestNeighbors

from curate.methods.cleaning import tomek_links

pytestmark = pytest.mark.usefixtures("one_thread")  # see tests/methods/conftest.py


def links_by_definition(X: np.ndarray, y: np.ndarray) -> set[int]:
    """Members of mutual-nearest-neighbour pairs with different labels (scikit-learn)."""
    near = NearestNeighbors(n_neighbors=1).fit(X).kneighbors(None, return_distance=False)[:, 0]
    mutual = near[near] == np.arange(len(y))
    return set(np.flatnonzero(mutual & (y[near] != y)).tolist())


@pytest.mark.parametrize("name", ["wine", "breast_cancer", "digits"])
@pytest.mark.parametrize("flip", [0.0, 0.1])
def test_tomek_links_match_the_definition_and_imbalanced_learn(name: str, flip: float) -> None:
    """Both members of every link go, the same rows imbalanced-learn removes."""
    X, y = dataset(name, flip=flip, seed=29)
    ours = tomek_links(space(X), y, removable=everyone(len(y)))
    removed = set(ours.removed.tolist())
    assert removed == links_by_definition(X, y)
    assert removed == removed_by(TomekLinks(sampling_strategy="all"), X, y)
    assert ours.info["links"] * 2 == len(removed)
    partner = {int(p): int(n[0]) for p, n in zip(ours.removed, ours.neighbours, strict=True)}
    assert all(partner[partner[p]] == p for p in partner)
    assert (ours.kept_as == -1).all()
    if flip:
        assert removed


def test_larger_removes_the_larger_class_member_like_imbalanced_learn_auto() -> None:
    """On two classes, imbalanced-learn's default strategy spares the smaller class."""
    X, y = dataset("breast_cancer", flip=0.1, seed=31)
    ours = tomek_links(space(X), y, removable=everyone(len(y)), remove="larger")
    assert set(ours.removed.tolist()) == removed_by(TomekLinks(sampling_strategy="auto"), X, y)
    larger = np.argmax(np.bincount(y))
    assert (y[ours.removed] == larger).all()
    assert all(int(a) == int(n[0]) for a, n in zip(ours.kept_as, ours.neighbours, strict=True))


def test_rows_outside_the_mask_stay_and_stand_for_their_partner() -> None:
    """Like imbalanced-learn with a class list; the kept partner is recorded as kept_as."""
    X, y = dataset("wine", flip=0.1, seed=37)
    removable = y != 0
    ours = tomek_links(space(X), y, removable=removable)
    assert set(ours.removed.tolist()) == removed_by(TomekLinks(sampling_strategy=[1, 2]), X, y)
    for pos, keeper, nbr in zip(ours.removed, ours.kept_as, ours.neighbours, strict=True):
        assert removable[pos]
        assert keeper == (nbr[0] if not removable[nbr[0]] else -1)


def test_equally_near_neighbours_resolve_to_the_lower_position() -> None:
    """Hand-made: 'a' at 0, 'b' at 1, 'c' at 2. Row 1 is 1 away from both others;
    its nearest neighbour is row 0, the lower position, so rows 0 and 1 form
    the link and row 2 (whose nearest is row 1) forms none. Classes of one row
    each are the same size, so ``remove="larger"`` removes both members."""
    X = np.array([[0.0], [1.0], [2.0]])
    ours = tomek_links(space(X), np.array(["a", "b", "c"]), removable=everyone(3))
    assert ours.removed.tolist() == [0, 1]
    assert [n.tolist() for n in ours.neighbours] == [[1], [0]]
    assert ours.distances[0].tolist() == [1.0]
    same_size = tomek_links(space(X), np.array(["a", "b", "c"]), removable=everyone(3),
                            remove="larger")
    assert same_size.removed.tolist() == [0, 1]


def test_same_label_mutual_neighbours_are_no_link() -> None:
    """Hand-made: two pairs of mutual nearest neighbours; only the mixed pair is a link."""
    X = np.array([[0.0], [0.5], [5.0], [5.5]])
    ours = tomek_links(space(X), np.array([0, 0, 0, 1]), removable=everyone(4))
    assert ours.removed.tolist() == [2, 3]
    assert ours.reason == ["tomek-link", "tomek-link"]
