"""Bad settings for the label-noise methods give a clear error naming the key (exit code 2).

What counts as bad is common practice, no source: a model that cannot be
imported or gives no class probabilities cannot sit in the committee;
stratified k-fold cross-validation needs k >= 2 and, per class, at least k
rows (scikit-learn's StratifiedKFold warns below that; curate refuses).
"""

from __future__ import annotations

import numpy as np
import pytest

from curate.errors import UsageError
from curate.methods.noise import CLASS_THRESHOLDS, COMMITTEE, IPF, committee
from curate.settings import check_params
from curate.space import Space

INFOS = [COMMITTEE, IPF, CLASS_THRESHOLDS]


def small() -> tuple[Space, np.ndarray]:
    x = np.linspace(0, 1, 12).reshape(-1, 1)
    return Space.from_matrix(x), np.array(["a"] * 9 + ["b"] * 3)


@pytest.mark.parametrize("info", INFOS, ids=lambda i: i.key)
@pytest.mark.parametrize(("models", "says"), [
    (["sklearn.ensemble.NoSuchForest"], "does not import"),
    (["nosuchpackage.Model"], "does not import"),
    (["sklearn.svm.LinearSVC"], "has no predict_proba"),
    (["sklearn.preprocessing.StandardScaler"], "has no predict_proba"),
    ([{"model": "linear", "params": {"no_such_parameter": 1}}], "does not take"),
    ([{"model": "knn", "params": {"k": 0}}], "knn member"),
    ("knn", "list of models"),
    ([], "list of models"),
])
def test_bad_models_name_the_key(info, models, says) -> None:
    with pytest.raises(UsageError) as caught:
        check_params(info, {"models": models})
    assert "'models'" in caught.value.message and caught.value.exit_code == 2
    assert caught.value.hint


@pytest.mark.parametrize("info", INFOS, ids=lambda i: i.key)
def test_fewer_than_two_folds(info) -> None:
    with pytest.raises(UsageError) as caught:
        check_params(info, {"folds": 1})
    assert "'folds'" in caught.value.message and caught.value.exit_code == 2


@pytest.mark.parametrize("info", INFOS, ids=lambda i: i.key)
def test_a_class_smaller_than_folds(info) -> None:
    space, labels = small()
    with pytest.raises(UsageError) as caught:
        info.func(space, labels, removable=np.ones(12, bool), folds=4, models=["linear"])
    assert "folds = 4" in caught.value.message and "'b' has only 3 rows" in caught.value.message
    assert caught.value.hint == "lower folds to 3"


def test_the_precise_reason_reaches_direct_calls() -> None:
    space, labels = small()
    with pytest.raises(UsageError, match=r"models\[2\]: 'sklearn.svm.SVC' has no predict_proba"):
        committee(space, labels, removable=np.ones(12, bool), folds=3,
                  models=["linear", "sklearn.svm.SVC"])
