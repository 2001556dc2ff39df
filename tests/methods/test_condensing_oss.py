"""One-sided selection against imbalanced-learn's OneSidedSelection and Kubat and Matwin 1997.

imbalanced-learn 0.14 draws each reduced class's starting row with
``RandomState(random_state).randint(0, class size)``, class by class in label
order; curate draws from numpy's default_rng instead. To compare the kept rows
exactly, the tests draw the same rows the way imbalanced-learn does (read in
its source, imblearn/under_sampling/_prototype_selection/_one_sided_selection.py)
and give them to curate's one_sided_with_draws.
"""

from __future__ import annotations

from collections import Counter

import numpy as np
import pytest
from condensing_fixtures import DATASETS, scaled
from imblearn.under_sampling import OneSidedSelection
from sklearn.neighbors import KNeighborsClassifier, NearestNeighbors

from curate.methods.base import encode
from curate.methods.one_sided import one_sided_selection, one_sided_with_draws
from curate.space import Space


def imblearn_draws(y: np.ndarray, random_state: int, reduced: list) -> tuple[int, dict[int, int]]:
    """(code of the minority class, {class code: drawn position}) as imbalanced-learn draws."""
    names, codes = encode(y)
    sizes = Counter(y)
    minority = min(sizes, key=sizes.get)
    rs = np.random.RandomState(random_state)
    draws = {}
    for c, name in enumerate(names):
        if name in reduced:
            rows = np.flatnonzero(y == name)
            draws[c] = int(rows[rs.randint(low=0, high=sizes[name], size=1)][0])
    return int(np.flatnonzero(names == minority)[0]), draws


@pytest.mark.parametrize("name", DATASETS)
@pytest.mark.parametrize("random_state", [0, 1, 2])
def test_same_rows_as_imbalanced_learn(name: str, random_state: int) -> None:
    """imbalanced-learn's OneSidedSelection (sampling_strategy="auto": every class but the
    minority is reduced) keeps exactly the rows curate keeps, given the same drawn rows."""
    X, y = scaled(name)
    ref = OneSidedSelection(random_state=random_state)
    ref.fit_resample(X, y)
    minority = Counter(y).most_common()[-1][0]
    small, draws = imblearn_draws(y, random_state, [c for c in np.unique(y) if c != minority])
    got = one_sided_with_draws(Space.from_matrix(X), y, removable=np.ones(len(y), bool),
                               small=small, draws=draws)
    assert got.kept.tolist() == np.sort(ref.sample_indices_).tolist()
    assert len(got.removed) > 0


def test_named_classes_match_imbalanced_learns_sampling_strategy_list() -> None:
    """Reducing only class 1 of wine: imbalanced-learn's sampling_strategy=[1] and curate's
    removable mask (the pipeline's `classes`) keep the same rows."""
    X, y = scaled("wine")
    ref = OneSidedSelection(random_state=5, sampling_strategy=[1])
    ref.fit_resample(X, y)
    small, draws = imblearn_draws(y, 5, [1])
    got = one_sided_with_draws(Space.from_matrix(X), y, removable=y == 1, small=small,
                               draws=draws)
    assert got.kept.tolist() == np.sort(ref.sample_indices_).tolist()
    assert set(y[got.removed].tolist()) == {1}


def test_each_step_follows_the_paper() -> None:
    """Kubat and Matwin 1997, two classes: positives all stay; a row removed in step 1 is
    labelled correctly by 1-NN over the positives and the negatives kept by step 1; a row
    removed in step 2 is a negative in a Tomek link among those rows (Tomek 1976: each is
    the other's nearest neighbour and the labels differ). Neighbours by scikit-learn."""
    X, y = scaled("breast_cancer")
    sel = one_sided_selection(Space.from_matrix(X), y, removable=np.ones(len(y), bool), seed=8)
    positive = 0  # malignant: 212 rows against 357 benign
    assert set(np.flatnonzero(y == positive).tolist()) <= set(sel.kept.tolist())
    reason = dict(zip(sel.removed.tolist(), sel.reason, strict=True))
    step1 = np.array(sorted(i for i, r in reason.items() if r == "redundant"))
    step2 = np.array(sorted(i for i, r in reason.items() if r == "tomek-link"))
    assert len(step1) and len(step2)
    c_rows = np.setdiff1d(np.arange(len(y)), step1)
    knn = KNeighborsClassifier(n_neighbors=1).fit(X[c_rows], y[c_rows])
    assert (knn.predict(X[step1]) == y[step1]).all()
    near = NearestNeighbors(n_neighbors=2).fit(X[c_rows]).kneighbors(X[c_rows])[1][:, 1]
    local = np.searchsorted(c_rows, step2)
    assert (near[near[local]] == local).all()
    assert (y[c_rows[near[local]]] == positive).all() and (y[step2] != positive).all()
    linked_negatives = [int(c_rows[i]) for i in range(len(c_rows))
                        if near[near[i]] == i and y[c_rows[i]] != y[c_rows[near[i]]]
                        and y[c_rows[i]] != positive]
    assert step2.tolist() == sorted(linked_negatives)


def test_same_seed_same_rows_and_small_class_named() -> None:
    """Same seed, same result (curate's contract); `interest` names the class kept whole,
    as the paper's positive class."""
    X, y = scaled("wine")
    s, everyone = Space.from_matrix(X), np.ones(len(y), bool)
    a = one_sided_selection(s, y, removable=everyone, seed=3)
    b = one_sided_selection(s, y, removable=everyone, seed=3)
    assert a.kept.tolist() == b.kept.tolist() and a.reason == b.reason
    named = one_sided_selection(s, y, removable=everyone, seed=3, interest=1)
    assert set(np.flatnonzero(y == 1).tolist()) <= set(named.kept.tolist())
    assert named.info["small"] == "1"
