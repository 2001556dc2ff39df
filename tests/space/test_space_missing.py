"""Missing-value policies and constant columns of curate.space.

References: scikit-learn's SimpleImputer (median, most_frequent), MinMaxScaler
and OneHotEncoder with scipy's cdist for "impute"; the error contract of
curate.errors for "stop".
"""

from __future__ import annotations

import warnings

import numpy as np
import polars as pl
import pytest
from scipy.spatial.distance import cdist
from sklearn.impute import SimpleImputer
from sklearn.preprocessing import MinMaxScaler, OneHotEncoder

from curate.errors import ConstantColumnWarning, InputError
from curate.settings import SpaceSettings
from curate.space import build_space

KINDS = {"a": "float", "b": "int", "c": "category"}


def _frame() -> pl.DataFrame:
    return pl.DataFrame({"a": [1.0, None, 3.0, 10.0, float("nan"), 4.0],
                         "b": [5, 7, None, 1, 2, 2],
                         "c": ["x", "y", None, "y", "x", None]})


@pytest.mark.parametrize(("column", "rows"), [("a", "2 rows (first: r1, r4)"),
                                              ("c", "2 rows (first: r2, r5)")])
def test_stop_names_the_column_the_rows_and_the_fix(column, rows):
    frame = _frame()
    if column == "c":
        frame = frame.with_columns(pl.col("a").fill_nan(0.0).fill_null(0.0),
                                   pl.col("b").fill_null(0))
    ids = [f"r{i}" for i in range(6)]
    with pytest.raises(InputError) as err:
        build_space(frame, KINDS, SpaceSettings(missing="stop"), ids)
    assert f"column {column!r}" in err.value.message and rows in err.value.message
    assert "impute" in (err.value.hint or "") and "far" in (err.value.hint or "")


def test_infinite_values_stop_under_every_policy():
    frame = pl.DataFrame({"a": [1.0, float("inf"), 2.0]})
    with pytest.raises(InputError, match="infinite values in 1 row \\(1\\)"):
        build_space(frame, {"a": "float"}, SpaceSettings(missing="far"), [0, 1, 2])


def test_impute_equals_sklearn_simple_imputer_then_scaling():
    frame = _frame()
    space = build_space(frame, KINDS, SpaceSettings(missing="impute"), list(range(6)))
    numbers = frame.select("a", "b").cast(pl.Float64).fill_nan(None).to_numpy()
    numbers = MinMaxScaler().fit_transform(SimpleImputer(strategy="median").fit_transform(numbers))
    text = np.array(frame["c"].to_list(), dtype=object).reshape(-1, 1)
    filled = SimpleImputer(strategy="most_frequent", missing_values=None).fit_transform(text)
    onehot = OneHotEncoder(sparse_output=False).fit_transform(filled) / np.sqrt(2)
    embedded = np.hstack([numbers, onehot])
    assert space.metric == "euclidean" and space.gaps is None
    np.testing.assert_allclose(space.distances(np.arange(6), np.arange(6)),
                               cdist(embedded, embedded), atol=1e-12)


def test_constant_columns_warn_and_contribute_nothing():
    """Reference: MinMaxScaler maps a constant column to 0 (scikit-learn), so the
    distance equals the one computed without the column."""
    frame = pl.DataFrame({"a": [1.0, 2.0, 4.0], "k": [3.0, 3.0, 3.0], "s": ["u", "u", "u"]})
    with pytest.warns(ConstantColumnWarning) as record:
        space = build_space(frame, {"a": "float", "k": "float", "s": "category"},
                            SpaceSettings(), [0, 1, 2])
    assert {str(w.message).split("'")[1] for w in record} == {"k", "s"}
    scaled = MinMaxScaler().fit_transform(frame.select("a").to_numpy())
    np.testing.assert_allclose(space.distances(np.arange(3), np.arange(3)),
                               cdist(scaled, scaled), atol=1e-12)


def test_hvdm_constant_numeric_column_warns_once():
    frame = pl.DataFrame({"a": [1.0, 2.0, 4.0], "k": [3.0, 3.0, 3.0]})
    with warnings.catch_warnings(record=True) as record:
        warnings.simplefilter("always")
        build_space(frame, {"a": "float", "k": "float"}, SpaceSettings(distance="hvdm"),
                    [0, 1, 2], labels=np.array([0, 1, 1]))
    assert [type(w.message) for w in record] == [ConstantColumnWarning]
