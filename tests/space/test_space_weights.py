"""Column weights in curate.space: learned by mutual information, or set by hand.

References: scikit-learn's mutual_info_classif; the weighted form of the
Wilson and Martinez (1997) distances, sqrt(sum_a w_a d_a^2), written out in
tests/mixed_definitions.py.
"""

from __future__ import annotations

import numpy as np
import open_data
import polars as pl
import pytest
from mixed_definitions import heom, heom_table
from sklearn.feature_selection import mutual_info_classif

from curate.errors import PipelineFileError
from curate.settings import SpaceSettings
from curate.space import WEIGHT_SEED, build_space


def _wine_mixed() -> tuple[pl.DataFrame, dict[str, str], np.ndarray]:
    data = open_data.bunch("wine")
    x, y = data.data[::3, :4], data.target[::3]
    frame = pl.DataFrame({f"f{j}": x[:, j] for j in range(4)}).with_columns(
        pl.Series("band", np.where(x[:, 0] > 13.0, "high", "low")))
    kinds = {**{f"f{j}": "float" for j in range(4)}, "band": "category"}
    return frame, kinds, y


def test_learned_weights_are_sklearn_mutual_information_scaled_to_mean_one():
    frame, kinds, y = _wine_mixed()
    space = build_space(frame, kinds, SpaceSettings(weights="mutual-information"),
                        list(range(frame.height)), labels=y)
    table = np.column_stack([frame[f"f{j}"].to_numpy() for j in range(4)]
                            + [(frame["band"] == "low").to_numpy().astype(float)])
    info = mutual_info_classif(table, y, discrete_features=[False] * 4 + [True],
                               random_state=WEIGHT_SEED)
    assert list(space.weights) == list(kinds)
    np.testing.assert_allclose(list(space.weights.values()), info / info.mean(), rtol=1e-12)


def test_weights_enter_as_the_definition_says_with_gaps():
    rng = np.random.default_rng(2)
    n = 25
    cols = {"u": rng.uniform(0, 1, n).tolist(), "v": rng.choice(["p", "q"], n).tolist()}
    for name in cols:
        for i in np.flatnonzero(rng.random(n) < 0.2):
            cols[name][i] = None
    frame = pl.DataFrame(cols, schema={"u": pl.Float64, "v": pl.String})
    settings = SpaceSettings(distance="heom", missing="far", weights={"u": 3.0, "v": 0.5})
    space = build_space(frame, {"u": "float", "v": "category"}, settings, list(range(n)))
    rows = [list(r) for r in frame.iter_rows()]
    ranges = heom_table(rows, [False, True])
    expected = [[heom(x, y, [False, True], ranges, [3.0, 0.5]) for y in rows] for x in rows]
    np.testing.assert_allclose(space.distances(np.arange(n), np.arange(n)), expected,
                               atol=1e-12)


@pytest.mark.parametrize(("distance", "factor"), [("euclidean", np.sqrt(4.0)),
                                                  ("manhattan", 4.0)])
def test_a_heavier_weight_scales_that_column_as_documented(distance, factor):
    """Weight w multiplies a column's squared part (Euclidean) or its part (Manhattan)."""
    frame = pl.DataFrame({"a": [0.0, 1.0, 0.0], "b": [0.0, 0.0, 1.0]})
    kinds = {"a": "float", "b": "float"}
    plain = build_space(frame, kinds, SpaceSettings(distance=distance), [0, 1, 2])
    heavy = build_space(frame, kinds, SpaceSettings(distance=distance, weights={"a": 4.0}),
                        [0, 1, 2])
    assert heavy.distances([0], [1])[0, 0] == pytest.approx(factor * plain.distances([0], [1])[0, 0])
    assert heavy.distances([0], [2])[0, 0] == pytest.approx(plain.distances([0], [2])[0, 0])


@pytest.mark.parametrize("settings", [
    {"distance": "cosine"}, {"scale": "minmax"}, {"missing": "drop"},
    {"distance": "hvdm", "scale": "zscore"}, {"weights": "gain-ratio"},
    {"weights": {"a": -1.0}}, {"weights": {"a": float("nan")}}, {"weights": {"a": True}},
])
def test_bad_settings_are_rejected(settings):
    with pytest.raises(PipelineFileError):
        SpaceSettings(**settings)


def test_weights_for_unknown_columns_are_rejected():
    frame = pl.DataFrame({"a": [0.0, 1.0]})
    with pytest.raises(PipelineFileError, match="'zz'"):
        build_space(frame, {"a": "float"}, SpaceSettings(weights={"zz": 2.0}), [0, 1])
