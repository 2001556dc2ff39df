"""The discretized method: target bins as classes, any classification method on them.

Outside references: pandas' ``qcut`` for the equal-frequency bins
(Arnaiz-González et al. 2016 cut the target by its quantiles), and
imbalanced-learn's ``EditedNearestNeighbours`` run on those bins as classes:
``kind_sel="all"`` is curate's ENN with ``vote="unanimous"``, and
``kind_sel="mode"`` its majority vote when two classes and odd k rule out tied
votes. Data: scikit-learn's bundled diabetes set, range-normalised by
``MinMaxScaler``.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from imblearn.under_sampling import EditedNearestNeighbours
from sklearn.datasets import load_diabetes
from sklearn.preprocessing import MinMaxScaler

from curate.errors import UsageError
from curate.methods import REGRESSION_METHODS
from curate.settings import check_params
from curate.space import Space

DISCRETIZED = REGRESSION_METHODS["discretized"]


@pytest.fixture(scope="module")
def diabetes() -> tuple[np.ndarray, np.ndarray]:
    x, y = load_diabetes(return_X_y=True)
    return MinMaxScaler().fit_transform(x), y


def _imblearn_removed(x: np.ndarray, classes: np.ndarray, kind: str) -> np.ndarray:
    sampler = EditedNearestNeighbours(sampling_strategy="all", n_neighbors=3, kind_sel=kind)
    sampler.fit_resample(x, classes)
    return np.setdiff1d(np.arange(len(classes)), sampler.sample_indices_)


@pytest.mark.parametrize(("bins", "vote", "kind"), [(2, "majority", "mode"),
                                                    (5, "unanimous", "all")])
def test_enn_on_bins_removes_what_imbalanced_learn_removes(diabetes, bins, vote, kind) -> None:
    x, y = diabetes
    classes = pd.qcut(y, bins, labels=False)
    sel = DISCRETIZED.func(Space.from_matrix(x), y, removable=np.ones(len(y), bool), bins=bins,
                           method="enn", params={"k": 3, "vote": vote})
    np.testing.assert_array_equal(np.sort(sel.removed), _imblearn_removed(x, classes, kind))


def test_the_audit_and_the_info_state_the_bins(diabetes) -> None:
    x, y = diabetes
    _, edges = pd.qcut(y, 4, retbins=True)
    sel = DISCRETIZED.func(Space.from_matrix(x), y, removable=np.ones(len(y), bool), bins=4,
                           unit="points")
    np.testing.assert_allclose(sel.info["bins"]["edges"], edges)
    assert sel.info["bins"]["rows"] == np.bincount(pd.qcut(y, 4, labels=False)).tolist()
    first = sel.removed[0]
    assert sel.detail[0].startswith(f"its target {y[first]:.1f} points is in bin ")
    assert " of 4 (" in sel.detail[0] and "points to " in sel.detail[0]


def test_inner_parameters_are_checked_against_the_inner_method(diabetes) -> None:
    x, y = diabetes
    with pytest.raises(UsageError, match=r"discretized \(enn\): parameter 'k' got 0"):
        DISCRETIZED.func(Space.from_matrix(x), y, removable=np.ones(len(y), bool),
                         params={"k": 0})
    with pytest.raises(UsageError, match="parameter 'method' got 'exact-duplicates'"):
        check_params(DISCRETIZED, {"method": "exact-duplicates"})
