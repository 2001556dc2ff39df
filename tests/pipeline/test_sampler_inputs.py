"""The sampler on numpy, pandas and polars inputs, and every method as a sampler.

Outside references: scikit-learn's bundled wine data; scikit-learn's ``clone``
and ``get_params`` contract; the overlap metric for nominal attributes
(Wilson and Martinez 1997: distance 0 for equal values, 1 otherwise), checked
by writing it out as one-hot columns scaled by 1/sqrt(2) for a numpy input;
plain Python sets for the partition of rows.
"""

from __future__ import annotations

import numpy as np
import open_data
import pandas as pd
import polars as pl
import pytest
from sklearn.base import clone

from curate import Sampler
from curate.errors import UsageError
from curate.methods import METHODS

REQUIRED = {"near-duplicates": {"radius": 0.05}}


def wine_with_faults(seed: int = 11) -> tuple[np.ndarray, np.ndarray]:
    """Raw wine features with 10% of labels moved and ten rows sent twice."""
    X, y = open_data.load("wine")
    rng = np.random.default_rng(seed)
    y = y.copy()
    for i in rng.choice(len(y), 18, replace=False):
        y[i] = (y[i] + 1) % 3
    again = rng.choice(len(y), 10, replace=False)
    return np.vstack([X, X[again]]), np.concatenate([y, y[again]])


def test_numpy_pandas_polars_select_the_same_rows() -> None:
    """One table in three containers: same kept positions, rows returned in the input's type."""
    X, y = wine_with_faults()
    names = [f"f{j}" for j in range(X.shape[1])]
    frame_pd, labels_pd = pd.DataFrame(X, columns=names), pd.Series(y, name="class")
    frame_pl, labels_pl = pl.DataFrame(X, schema=names, orient="row"), pl.Series("class", y)
    kept = {}
    for name, (data, labels) in {"numpy": (X, y), "pandas": (frame_pd, labels_pd),
                                 "polars": (frame_pl, labels_pl)}.items():
        sampler = Sampler(method="enn", k=5)
        X_res, y_res = sampler.fit_resample(data, labels)
        kept[name] = sampler.sample_indices_.tolist()
        assert type(X_res) is type(data) and type(y_res) is type(labels)
        assert len(X_res) == len(y_res) == len(kept[name]) < len(y)
    assert kept["numpy"] == kept["pandas"] == kept["polars"]
    X_res, _ = Sampler(method="enn", k=5).fit_resample(frame_pd, labels_pd)
    assert X_res.index.tolist() == kept["pandas"], "a pandas frame keeps its index"


def test_nominal_columns_use_the_overlap_metric() -> None:
    """Text columns of pandas and polars frames are nominal: the same rows go as with ENN
    computed by hand over range-scaled size and one-hot colour scaled by 1/sqrt(2) (so two
    different colours are at distance 1, equal ones at 0)."""
    rng = np.random.default_rng(4)
    n = 120
    size = rng.uniform(0.0, 1.0, n)
    colour = rng.choice(["red", "green", "blue"], n)
    y = np.where((size > 0.5) ^ (colour == "red"), "worn", "ok")
    y[rng.choice(n, 12, replace=False)] = "worn"
    onehot = (colour[:, None] == np.array(["blue", "green", "red"])[None, :]) / np.sqrt(2)
    by_hand = np.column_stack([(size - size.min()) / (size.max() - size.min()), onehot])
    expected = _enn_by_hand(by_hand, y, k=3)
    for frame in (pd.DataFrame({"size": size, "colour": colour}),
                  pl.DataFrame({"size": size, "colour": colour})):
        sampler = Sampler(method="enn", k=3)
        sampler.fit_resample(frame, y)
        assert sampler.sample_indices_.tolist() == expected


def _enn_by_hand(X: np.ndarray, y: np.ndarray, k: int) -> list[int]:
    """Wilson 1972 with plain numpy: keep a row unless most of its k nearest others disagree
    (ties in distance broken by lower position, as curate documents)."""
    d = np.sqrt(((X[:, None, :] - X[None, :, :]) ** 2).sum(axis=2))
    np.fill_diagonal(d, np.inf)
    kept = []
    for i in range(len(y)):
        order = np.lexsort((np.arange(len(y)), d[i]))[:k]
        values, counts = np.unique(y[order], return_counts=True)
        best = values[counts == counts.max()]
        if y[i] in best:
            kept.append(i)
    return kept


@pytest.mark.parametrize("key", sorted(METHODS))
def test_every_method_works_as_a_sampler(key: str) -> None:
    """Kept and removed rows partition the input, the rows returned are the kept ones, every
    reason comes from the method's table, the same seed gives the same rows, and rows of the
    smallest class stay under classes="all-but-smallest"."""
    X, y = wine_with_faults()
    params = REQUIRED.get(key)
    sampler = Sampler(method=key, params=params, seed=5)
    X_res, y_res = sampler.fit_resample(X, y)
    kept = [int(i) for i in sampler.sample_indices_]
    removed = sampler.audit_["row_id"].to_list()
    assert set(kept) | set(removed) == set(range(len(y))) and not set(kept) & set(removed)
    np.testing.assert_array_equal(X_res, X[kept])
    np.testing.assert_array_equal(y_res, y[kept])
    assert set(sampler.audit_["reason"]) <= set(METHODS[key].reasons)
    assert sampler.audit_["label"].to_list() == y[removed].tolist()
    again = Sampler(method=key, params=params, seed=5).fit(X, y)
    assert again.sample_indices_.tolist() == kept
    assert again.audit_.equals(sampler.audit_)
    values, counts = np.unique(y, return_counts=True)
    smallest = values[np.argmin(counts)]
    spare = Sampler(method=key, params=params, classes="all-but-smallest").fit(X, y)
    assert smallest not in set(spare.audit_["label"].to_list())
    for name, scores in sampler.scores_.items():
        assert len(scores) == len(y), name


def test_keyword_parameters_are_stored_in_params() -> None:
    """Keyword convenience lands in ``params``; scikit-learn's clone keeps it."""
    a = Sampler(method="enn", k=5, vote="unanimous")
    b = Sampler(method="enn", params={"k": 5, "vote": "unanimous"})
    assert a.get_params() == b.get_params()
    assert clone(a).get_params()["params"] == {"k": 5, "vote": "unanimous"}
    assert Sampler(method="enn", params={"k": 5}, k=7).get_params()["params"] == {"k": 7}


def test_bad_settings_name_the_fix() -> None:
    """Settings are checked against the method's declared table when fitting."""
    X, y = wine_with_faults()
    with pytest.raises(UsageError, match="unknown method 'enm'"):
        Sampler(method="enm").fit_resample(X, y)
    with pytest.raises(UsageError, match="parameter 'k' got 0"):
        Sampler(method="enn", k=0).fit_resample(X, y)
    with pytest.raises(UsageError, match="unknown parameter 'radius'"):
        Sampler(method="enn", radius=0.1).fit_resample(X, y)
    with pytest.raises(UsageError, match="classes"):
        Sampler(method="enn", classes=[]).fit_resample(X, y)
    with pytest.raises(ValueError, match="Invalid parameter 'radius'"):
        Sampler(method="enn").set_params(radius=0.1)


def test_bad_targets_are_refused() -> None:
    """As in scikit-learn: no target, continuous or multi-output targets are errors."""
    X, y = wine_with_faults()
    with pytest.raises(ValueError, match="requires y"):
        Sampler().fit_resample(X, None)
    with pytest.raises(ValueError, match="Unknown label type"):
        Sampler().fit_resample(X, np.linspace(0.0, 1.0, len(y)))
    with pytest.raises(ValueError, match="multioutput"):
        Sampler().fit_resample(X, np.column_stack([y, y]))
    with pytest.raises(ValueError, match="one class only"):
        Sampler().fit_resample(X, np.zeros(len(y), dtype=int))
