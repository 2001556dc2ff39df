"""Shared checks run against every method registered for regression (DEVELOPERS.md,
"Contracts the tests hold"), as tests/methods/test_every_method.py runs them for classification.

Kept and removed positions partition the input and every removal is explained with the
method's own reason codes; the same seed gives the same result; rows that may not be removed
stay; tiny and empty inputs give a defined result or a clear error; a run keeps the input's
columns, types and values at the kept ids. These invariants are common practice, no source;
the values are compared with polars' own reading of the input file (outside reference).
Data: scikit-learn's bundled diabetes set, range-normalised with MinMaxScaler, with seeded
outliers (5% of targets moved by several standard deviations).
"""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest
from run_checks import assert_run_keeps_the_input
from sklearn.datasets import load_diabetes
from sklearn.preprocessing import MinMaxScaler

from curate.api import run
from curate.errors import CurateError
from curate.evaluation.regression_stats import inject_outliers
from curate.methods import REGRESSION_METHODS
from curate.space import Space

NEEDS = {"hardness": {"threshold": 2.0}}
KEYS = list(REGRESSION_METHODS)


def call(key: str, space: Space, targets: np.ndarray, removable: np.ndarray | None = None,
         seed: int = 0):
    info = REGRESSION_METHODS[key]
    mask = np.ones(space.n, dtype=bool) if removable is None else removable
    return info.func(space, targets, removable=mask, seed=seed,
                     **(info.defaults() | NEEDS.get(key, {})))


@pytest.fixture(scope="module")
def data() -> tuple[Space, np.ndarray]:
    x, y = load_diabetes(return_X_y=True)
    return Space.from_matrix(MinMaxScaler().fit_transform(x)), inject_outliers(y, 0.05, 3)[0]


@pytest.mark.parametrize("key", KEYS)
def test_selection_partitions_and_explains_itself(key, data):
    space, targets = data
    sel = call(key, space, targets)
    together = np.concatenate([sel.kept, sel.removed])
    assert np.array_equal(np.sort(together), np.arange(space.n)), "kept and removed must partition"
    assert set(sel.reason) <= set(REGRESSION_METHODS[key].reasons)
    assert len(sel.detail) == len(sel.removed) and all(d.strip() for d in sel.detail)
    kept = set(sel.kept.tolist())
    assert all(keeper == -1 or keeper in kept for keeper in sel.kept_as)


@pytest.mark.parametrize("key", KEYS)
def test_same_seed_same_result(key, data):
    space, targets = data
    a, b = call(key, space, targets, seed=5), call(key, space, targets, seed=5)
    assert np.array_equal(a.kept, b.kept) and a.reason == b.reason


@pytest.mark.parametrize("key", KEYS)
def test_rows_that_may_not_be_removed_stay(key, data):
    space, targets = data
    removable = np.arange(space.n) % 3 != 0
    sel = call(key, space, targets, removable=removable)
    assert np.all(removable[sel.removed])


@pytest.mark.parametrize("key", KEYS)
@pytest.mark.parametrize("rows", [0, 2])
def test_tiny_and_empty_inputs_are_defined(key, rows):
    space = Space.from_matrix(np.arange(rows * 2, dtype=float).reshape(rows, 2))
    try:
        sel = call(key, space, np.arange(rows, dtype=float))
    except CurateError as err:
        assert "hint" in str(err)
        return
    assert sel.n == rows and sorted([*sel.kept.tolist(), *sel.removed.tolist()]) == \
        list(range(rows))


@pytest.mark.parametrize("key", KEYS)
def test_types_are_preserved_through_a_run(key, tmp_path, data):
    x, y = load_diabetes(return_X_y=True)
    frame = pl.DataFrame(x[:, :4], schema=["a", "b", "c", "d"]).with_columns(
        pl.Series("flag", np.arange(len(y)) % 2 == 0), pl.Series("y", data[1]))
    frame.write_parquet(tmp_path / "t.parquet")
    stage = {"method": key, "max_removed_share": 1.0} | NEEDS.get(key, {})
    result = run({"input": {"path": "t.parquet", "label": "y", "task": "regression"},
                  "stages": [stage]}, base=tmp_path)
    assert_run_keeps_the_input(result, tmp_path / "t.parquet", frame)
