"""What condensing records and protects: kept_as, evidence, removable rows, conflicts, edges."""

from __future__ import annotations

import numpy as np
import pytest
from condensing_fixtures import misclassified_by_kept, scaled
from scipy.spatial.distance import cdist

from curate.errors import UsageError
from curate.methods import METHODS
from curate.methods._store import NearestStore
from curate.methods.condensing import cnn, fcnn, rnn
from curate.methods.one_sided import one_sided_selection
from curate.settings import check_params
from curate.space import Space

CONDENSING = {"cnn": cnn, "fcnn": fcnn, "rnn": rnn}


@pytest.mark.parametrize("method", sorted(CONDENSING))
def test_kept_as_is_a_kept_row_with_the_same_label_and_its_nearest(method: str) -> None:
    """kept_as of an absorbed row is the kept row that labels it under 1-NN: kept, same
    label, and no kept row nearer (distances by scipy's cdist, the reference for the
    recorded distances)."""
    X, y = scaled("breast_cancer")
    sel = CONDENSING[method](Space.from_matrix(X), y, removable=np.ones(len(y), bool), seed=2)
    kept = set(sel.kept.tolist())
    to_kept = cdist(X[sel.removed], X[sel.kept])
    for r, (i, j) in enumerate(zip(sel.removed.tolist(), sel.kept_as.tolist(), strict=True)):
        assert j in kept and y[j] == y[i]
        assert sel.neighbours[r].tolist() == [j]
        assert sel.distances[r][0] == pytest.approx(to_kept[r].min(), abs=1e-12)
        assert sel.reason[r] in METHODS[method].reasons
    assert set(sel.reason) <= set(METHODS[method].reasons)


@pytest.mark.parametrize("method", sorted(CONDENSING) + ["oss"])
def test_rows_that_may_not_go_stay(method: str) -> None:
    """The removable mask (the pipeline's `classes`) is honoured, and CNN, FCNN and RNN stay
    consistent (Hart 1968, checked by scikit-learn's 1-NN)."""
    X, y = scaled("wine")
    fixed = np.random.default_rng(1).random(len(y)) < 0.3
    func = {**CONDENSING, "oss": one_sided_selection}[method]
    sel = func(Space.from_matrix(X), y, removable=~fixed, seed=4)
    assert set(np.flatnonzero(fixed).tolist()) <= set(sel.kept.tolist())
    assert len(sel.removed) > 0
    if method != "oss":
        assert misclassified_by_kept(X, y, sel.kept).tolist() == []


def test_conflicting_copies_are_both_kept() -> None:
    """Rows with equal features and different labels cannot both be labelled right (Hart
    1968's consistency is impossible there); curate keeps both, and every other row is
    labelled right by scikit-learn's 1-NN on the kept rows."""
    X, y = scaled("iris")
    X = np.vstack([X, X[[10, 60]]])
    y = np.concatenate([y, [2, 0]])  # copies of rows 10 and 60 with other labels
    for method, func in CONDENSING.items():
        sel = func(Space.from_matrix(X), y, removable=np.ones(len(y), bool), seed=0)
        kept = set(sel.kept.tolist())
        assert {10, 150, 60, 151} <= kept, method
        assert set(misclassified_by_kept(X, y, sel.kept).tolist()) <= {10, 150, 60, 151}


def test_compiled_and_plain_stores_agree() -> None:
    """The compiled store and the plain one (used for distances that are not plain Lp
    distances) are two routes to the same answers: the fast path must agree with the
    obvious one (curate's house rule), here on Euclidean and Manhattan distance."""
    X, y = scaled("wine")
    order = np.random.default_rng(6).permutation(len(y))
    for metric in ("euclidean", "manhattan"):
        results = []
        for compiled in (True, False):
            store = NearestStore(Space.from_matrix(X, metric=metric))
            store.compiled = compiled
            store.add(order[:1], when=0)
            store.hart(y, order)
            results.append((store.members.tolist(), *[a.tolist() for a in store.nearest()]))
        assert results[0][:2] == results[1][:2]
        assert np.allclose(results[0][2], results[1][2], rtol=0, atol=1e-12)


@pytest.mark.parametrize("method", sorted(CONDENSING) + ["oss"])
def test_single_class_and_empty_inputs(method: str) -> None:
    """One class: 1-NN needs one row to label all the others right (Hart 1968), OSS keeps
    the only class whole (Kubat and Matwin 1997); no rows: nothing to do."""
    func = {**CONDENSING, "oss": one_sided_selection}[method]
    X, _ = scaled("wine")
    y = np.zeros(len(X), dtype=int)
    sel = func(Space.from_matrix(X), y, removable=np.ones(len(y), bool), seed=0)
    assert len(sel.kept) == (len(y) if method == "oss" else 1)
    empty = func(Space.from_matrix(np.zeros((0, 3))), np.zeros(0), removable=np.zeros(0, bool))
    assert empty.n == 0


def test_registered_with_declared_parameters() -> None:
    """Pipeline keys are contracts: cnn, fcnn, rnn, oss; a bad order is a usage error."""
    assert {"cnn", "fcnn", "rnn", "oss"} <= set(METHODS)
    assert check_params(METHODS["cnn"], {})["order"] == "shuffled"
    with pytest.raises(UsageError, match="order"):
        check_params(METHODS["rnn"], {"order": "random"})
