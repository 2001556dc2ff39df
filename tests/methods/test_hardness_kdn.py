"""kDN hardness (Smith, Martinez and Giraud-Carrier 2014) against scikit-learn.

kDN(x) = |{y among the k nearest neighbours of x : label(y) != label(x)}| / k.
The paper sets k = 5 (from memory), curate's default. The reference is a
direct computation from scikit-learn's NearestNeighbors on wine,
range-normalised with MinMaxScaler.
"""

from __future__ import annotations

import numpy as np
import pytest
from editing_fixtures import dataset
from sklearn.neighbors import NearestNeighbors

from curate.errors import UsageError
from curate.methods import METHODS
from curate.methods.scores import hardness
from curate.settings import check_params
from curate.space import Space


def sklearn_kdn(X: np.ndarray, y: np.ndarray, k: int) -> np.ndarray:
    idx = NearestNeighbors(n_neighbors=k).fit(X).kneighbors(None, return_distance=False)
    return (y[idx] != y[:, None]).mean(axis=1)


@pytest.mark.parametrize("k", [1, 5, 9])
def test_scores_equal_sklearn_on_wine(k):
    X, y = dataset("wine")
    sel = hardness(Space.from_matrix(X), y, removable=np.ones(len(y), dtype=bool), k=k)
    np.testing.assert_allclose(sel.scores["hardness"], sklearn_kdn(X, y, k))
    assert len(sel.removed) == 0  # no threshold: score only


def test_threshold_removes_exactly_the_hard_removable_rows():
    X, y = dataset("wine")
    removable = np.random.default_rng(0).random(len(y)) > 0.2
    sel = hardness(Space.from_matrix(X), y, removable=removable, threshold=0.6)
    expected = np.flatnonzero((sklearn_kdn(X, y, 5) >= 0.6) & removable)
    assert sorted(sel.removed.tolist()) == expected.tolist() and len(expected) > 0
    assert set(sel.reason) == {"hard"}
    assert all((y[nb] != y[p]).sum() >= 3 for p, nb in zip(sel.removed, sel.neighbours,
                                                          strict=True))


def test_default_k_and_threshold_bounds():
    assert METHODS["hardness"].defaults() == {"k": 5, "threshold": None}
    for bad in (0, 1.5, -0.2):
        with pytest.raises(UsageError, match="threshold"):
            check_params(METHODS["hardness"], {"threshold": bad})


def test_scores_reach_the_kept_output_as_a_column(tmp_path):
    """A hardness stage writes kDN into kept.parquet (scikit-learn's computation as reference),
    and `[output] scores = false` leaves the input's columns alone."""
    import polars as pl
    from sklearn.preprocessing import MinMaxScaler

    from curate.api import run

    X, y = dataset("wine")
    frame = pl.DataFrame(X, schema=[f"f{i}" for i in range(X.shape[1])]).with_columns(
        pl.Series("y", y))
    frame.write_parquet(tmp_path / "wine.parquet")
    spec = {"input": {"path": "wine.parquet", "label": "y"},
            "stages": [{"method": "hardness", "k": 5}]}
    kept = run(spec, base=tmp_path).kept
    expected = sklearn_kdn(MinMaxScaler().fit_transform(X), y, 5)
    np.testing.assert_allclose(kept.sort("row_id")["hardness"].to_numpy(), expected)
    quiet = run(spec | {"output": {"scores": False}}, base=tmp_path).kept
    assert "hardness" not in quiet.columns
