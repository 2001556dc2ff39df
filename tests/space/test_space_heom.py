"""HEOM in curate.space against scikit-learn, scipy and the definition of Wilson and Martinez (1997)."""

from __future__ import annotations

import numpy as np
import open_data
import polars as pl
from mixed_definitions import heom, heom_table
from scipy.spatial.distance import cdist
from sklearn.preprocessing import MinMaxScaler

from curate.settings import SpaceSettings
from curate.space import build_space


def test_heom_on_numeric_columns_is_euclidean_distance_after_range_scaling():
    """Reference: sklearn MinMaxScaler + scipy cdist (HEOM's range_diff is |x-y|/range)."""
    x = open_data.bunch("wine").data[::4, :6]
    frame = pl.DataFrame({f"f{j}": x[:, j] for j in range(x.shape[1])})
    kinds = {f"f{j}": "float" for j in range(x.shape[1])}
    space = build_space(frame, kinds, SpaceSettings(distance="heom"), list(range(len(x))))
    expected = cdist(MinMaxScaler().fit_transform(x), MinMaxScaler().fit_transform(x))
    assert space.metric == "euclidean"
    np.testing.assert_allclose(space.distances(np.arange(len(x)), np.arange(len(x))),
                               expected, atol=1e-12)


def test_heom_with_nominal_columns_and_gaps_equals_the_definition():
    """Reference: the paper's HEOM (overlap, range_diff, 1 for a missing value), as loops."""
    rng = np.random.default_rng(7)
    n = 35
    cols = {"size": rng.uniform(0, 50, n).tolist(),
            "grade": rng.choice(["A", "B", "C"], n).tolist(),
            "ok": rng.choice([True, False], n).tolist()}
    for name in cols:
        for i in np.flatnonzero(rng.random(n) < 0.2):
            cols[name][i] = None
    frame = pl.DataFrame(cols, schema={"size": pl.Float64, "grade": pl.String,
                                       "ok": pl.Boolean})
    kinds = {"size": "float", "grade": "category", "ok": "bool"}
    nominal = [False, True, True]
    space = build_space(frame, kinds, SpaceSettings(distance="heom", missing="far"),
                        list(range(n)))
    rows = [list(r) for r in frame.iter_rows()]
    ranges = heom_table(rows, nominal)
    expected = np.array([[heom(x, y, nominal, ranges) for y in rows] for x in rows])
    assert space.metric == "heom-missing"
    np.testing.assert_allclose(space.distances(np.arange(n), np.arange(n)), expected,
                               atol=1e-12)


def test_manhattan_far_adds_one_per_missing_attribute():
    """Definition (common practice, no source): L1 over range-scaled numbers and overlap,
    with the paper's distance 1 for an attribute missing in either row."""
    frame = pl.DataFrame({"a": [0.0, 4.0, None, 8.0], "b": ["x", None, "y", "x"]})
    kinds = {"a": "float", "b": "category"}
    space = build_space(frame, kinds, SpaceSettings(distance="manhattan", missing="far"),
                        [10, 11, 12, 13])
    rows = [list(r) for r in frame.iter_rows()]
    expected = np.zeros((4, 4))
    for i, x in enumerate(rows):
        for j, y in enumerate(rows):
            da = 1.0 if x[0] is None or y[0] is None else abs(x[0] - y[0]) / 8.0
            db = 1.0 if x[1] is None or y[1] is None else float(x[1] != y[1])
            expected[i, j] = da + db
    assert space.metric == "manhattan-missing"
    np.testing.assert_allclose(space.distances(np.arange(4), np.arange(4)), expected)
