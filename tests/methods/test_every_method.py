"""Shared checks run against every registered method (DEVELOPERS.md, "Contracts the tests hold").

Each test asserts one of them: kept and removed positions partition the input and every
removal is explained with the method's own reason codes; the same seed gives the same
result; rows that may not be removed stay; single-class, tiny and empty inputs give a
defined result or a clear error (a curate error with a hint); a run keeps the input's
columns, types and values at the kept ids, and its kept and removed ids partition the
input. These invariants are common practice, no source; the values are compared with
polars' own reading of the input file (outside reference).

Data: scikit-learn's bundled wine set, range-normalised with scikit-learn's MinMaxScaler,
with seeded 10% label flips (open data shipped in a package).
"""

from __future__ import annotations

import numpy as np
import open_data
import polars as pl
import pytest
from sklearn.preprocessing import MinMaxScaler

from curate.api import run
from curate.errors import CurateError
from curate.methods import METHODS
from curate.space import Space

# Parameters a method needs beyond its defaults (near copies have no sensible default radius).
NEEDS = {"near-duplicates": {"radius": 0.08}, "hardness": {"threshold": 0.6}}


def wine(flip: float = 0.1, seed: int = 0) -> tuple[Space, np.ndarray]:
    X, y = open_data.load("wine")
    y = y.copy()
    rng = np.random.default_rng(seed)
    flipped = rng.choice(len(y), int(flip * len(y)), replace=False)
    y[flipped] = (y[flipped] + rng.integers(1, 3, len(flipped))) % 3
    return Space.from_matrix(MinMaxScaler().fit_transform(X)), y


def call(key: str, space: Space, labels: np.ndarray, removable: np.ndarray | None = None,
         seed: int = 0):
    info = METHODS[key]
    mask = np.ones(space.n, dtype=bool) if removable is None else removable
    return info.func(space, labels, removable=mask, seed=seed, **(info.defaults() | NEEDS.get(key, {})))


@pytest.fixture(scope="module")
def data():
    return wine()


@pytest.mark.parametrize("key", list(METHODS))
def test_selection_partitions_and_explains_itself(key, data):
    space, labels = data
    sel = call(key, space, labels)
    together = np.concatenate([sel.kept, sel.removed])
    assert np.array_equal(np.sort(together), np.arange(space.n)), "kept and removed must partition"
    assert np.all(np.diff(sel.kept) > 0)
    assert len(sel.reason) == len(sel.detail) == len(sel.neighbours) == len(sel.removed)
    assert set(sel.reason) <= set(METHODS[key].reasons), "reason codes come from the method's list"
    assert all(d.strip() for d in sel.detail)
    kept = set(sel.kept.tolist())
    for keeper in sel.kept_as:
        assert keeper == -1 or keeper in kept, "kept_as must name a kept row"
    for nbrs, dists in zip(sel.neighbours, sel.distances, strict=True):
        assert len(nbrs) == len(dists)
        assert np.all((nbrs >= 0) & (nbrs < space.n))


@pytest.mark.parametrize("key", list(METHODS))
def test_same_seed_same_result(key, data):
    space, labels = data
    a, b = call(key, space, labels, seed=5), call(key, space, labels, seed=5)
    assert np.array_equal(a.kept, b.kept)
    assert a.reason == b.reason and np.array_equal(a.kept_as, b.kept_as)


@pytest.mark.parametrize("key", list(METHODS))
def test_rows_that_may_not_be_removed_stay(key, data):
    space, labels = data
    removable = labels != 1
    sel = call(key, space, labels, removable=removable)
    assert np.all(removable[sel.removed])


@pytest.mark.parametrize("key", list(METHODS))
def test_single_class_input_is_defined(key, data):
    space, labels = data
    try:
        sel = call(key, space, np.zeros(space.n, dtype=np.int64))
    except CurateError as err:
        assert "hint" in str(err)
        return
    assert len(sel.kept) >= 1, "a single-class input keeps at least one row"


@pytest.mark.parametrize("key", list(METHODS))
def test_tiny_input_is_defined(key):
    space = Space.from_matrix(np.array([[0.0], [1.0]]))
    try:
        sel = call(key, space, np.array(["a", "b"]))
    except CurateError as err:
        assert "hint" in str(err)
        return
    assert sel.n == 2
    assert sorted([*sel.kept.tolist(), *sel.removed.tolist()]) == [0, 1]


@pytest.mark.parametrize("key", list(METHODS))
def test_empty_input_is_defined(key):
    space = Space.from_matrix(np.zeros((0, 2)))
    try:
        sel = call(key, space, np.array([], dtype=np.int64))
    except CurateError as err:
        assert "hint" in str(err)
        return
    assert sel.n == 0 and len(sel.reason) == 0


@pytest.mark.parametrize("key", list(METHODS))
def test_types_are_preserved_through_a_run(key, tmp_path, wine):
    """Kept and removed rows have the input's own columns, types and values at their ids, and
    their ids partition the input (polars reads the input back as the reference)."""
    X, y = wine
    frame = pl.DataFrame(X[:, :4], schema=["a", "b", "c", "d"]).with_columns(
        pl.Series("flag", np.arange(len(y)) % 2 == 0), pl.Series("y", y.astype(np.int64)))
    frame.write_parquet(tmp_path / "t.parquet")
    stage = {"method": key, "max_removed_share": 1.0} | NEEDS.get(key, {})
    result = run({"input": {"path": "t.parquet", "label": "y"}, "stages": [stage]}, base=tmp_path)
    for part in (result.kept, result.removed):
        assert part.select(frame.columns).schema == frame.schema
    given = pl.read_parquet(tmp_path / "t.parquet")
    ids = sorted([*result.kept["row_id"].to_list(), *result.removed["row_id"].to_list()])
    assert ids == list(range(given.height)), "kept and removed ids partition the input"
    at_ids = given.with_row_index("row_id").filter(pl.col("row_id").is_in(result.kept["row_id"]))
    assert result.kept.select(frame.columns).equals(at_ids.select(frame.columns))
