"""A class with fewer rows than folds: the evaluation runs, and says which test folds lack it.

Outside references: scikit-learn's StratifiedKFold with the same seed (it runs
with such a class and warns; the folds that hold none of its rows are counted
from its own split), and ``cross_val_score`` with MinMaxScaler and
KNeighborsClassifier on those folds for the uncurated score. Data:
scikit-learn's bundled wine set with its third class cut to 7 rows.
"""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest
from evaluate_fixtures import spec_for
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import MinMaxScaler

from curate.evaluation.crossval import evaluate

FOLDS, SEED = 10, 1


def test_ten_folds_with_a_class_of_seven(tmp_path, wine) -> None:
    x, y = wine
    keep = np.flatnonzero((y != 2) | (np.cumsum(y == 2) <= 7))
    x, y = x[keep], y[keep]
    frame = pl.DataFrame(x, schema=[f"f{j}" for j in range(x.shape[1])], orient="row")
    frame.with_columns(pl.Series("target", y)).write_csv(tmp_path / "wine7.csv")
    spec = spec_for(tmp_path / "wine7.csv", "target", [{"method": "enn", "k": 3}])
    out = evaluate(spec, folds=FOLDS, ks=[1], seed=SEED)

    split = StratifiedKFold(FOLDS, shuffle=True, random_state=SEED)
    with pytest.warns(UserWarning, match="least populated class"):
        tests = [test for _, test in split.split(x, y)]
    lacking = sum(not np.any(y[test] == 2) for test in tests)
    assert lacking > 0
    assert out["warnings"] == [f"class '2' has 7 rows, fewer than the {FOLDS} folds: {lacking} "
                               f"of the {FOLDS} test folds hold none of its rows"]
    with pytest.warns(UserWarning, match="least populated class"):
        expected = cross_val_score(make_pipeline(MinMaxScaler(), KNeighborsClassifier(1)), x, y,
                                   cv=split).mean()
    assert out["results"][0]["accuracy"] == pytest.approx(expected, abs=1e-12)
