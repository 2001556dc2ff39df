"""Conflicting copies for numeric targets against polars' grouping of equal rows.

Outside reference: polars ``group_by`` on the feature columns (groups of rows
with equal feature values, and the range of their targets) and numpy's
median and standard deviation. Data: the first 40 rows of scikit-learn's
bundled diabetes set, with seeded copies appended (rows 0-4 copied with
targets 0.5 higher, rows 5-9 with targets 50 higher, row 10 copied twice).
"""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest
from sklearn.datasets import load_diabetes

from curate.errors import UsageError
from curate.methods.reg_duplicates import regression_conflicts
from curate.space import Space


@pytest.fixture(scope="module")
def table() -> tuple[np.ndarray, np.ndarray]:
    x, y = load_diabetes(return_X_y=True)
    x, y = x[:40], y[:40]
    copies = [*range(10), 10, 10]
    shift = np.array([0.5] * 5 + [50.0] * 5 + [10.0, 30.0])
    return np.vstack([x, x[copies]]), np.concatenate([y, y[copies] + shift])


def _groups(x: np.ndarray, y: np.ndarray, tolerance: float) -> list[list[int]]:
    frame = pl.DataFrame(x, schema=[f"f{j}" for j in range(x.shape[1])], orient="row")
    frame = frame.with_columns(pl.Series("y", y), pl.int_range(pl.len()).alias("pos"))
    spread = frame.group_by([f"f{j}" for j in range(x.shape[1])]).agg(
        (pl.col("y").max() - pl.col("y").min()).alias("range"), pl.col("pos").sort())
    return sorted(g for g in spread.filter(pl.col("range") > tolerance)["pos"].to_list())


def test_drop_all_removes_every_row_of_each_group_polars_finds(table) -> None:
    x, y = table
    sel = regression_conflicts(Space.from_matrix(x), y, removable=np.ones(len(y), bool),
                               tolerance=1.0)
    groups = _groups(x, y, 1.0)
    assert len(groups) == 6 and sel.info["conflicting_groups"] == 6
    assert sorted(sel.removed.tolist()) == sorted(p for g in groups for p in g)


def test_keep_median_keeps_the_row_nearest_the_groups_median(table) -> None:
    x, y = table
    sel = regression_conflicts(Space.from_matrix(x), y, removable=np.ones(len(y), bool),
                               tolerance=1.0, policy="keep-median")
    for group in _groups(x, y, 1.0):
        off = np.abs(y[group] - np.median(y[group]))
        keeper = group[int(np.argmin(off))]  # first minimum: the lower position on a tie
        assert keeper in sel.kept.tolist()
        gone = [p for p in group if p != keeper]
        assert set(gone) <= set(sel.removed.tolist())
        assert set(sel.kept_as[np.isin(sel.removed, gone)].tolist()) == {keeper}


def test_relative_tolerance_is_in_standard_deviations_of_the_target(table) -> None:
    x, y = table
    tolerance = 0.2 * np.std(y)
    sel = regression_conflicts(Space.from_matrix(x), y, removable=np.ones(len(y), bool),
                               relative_tolerance=0.2, policy="report")
    assert len(sel.removed) == 0
    assert [g.tolist() for g in sel.groups] == _groups(x, y, tolerance)
    assert sel.info["tolerance"] == pytest.approx(tolerance)


def test_both_tolerances_at_once_are_refused(table) -> None:
    x, y = table
    with pytest.raises(UsageError, match="not both"):
        regression_conflicts(Space.from_matrix(x), y, removable=np.ones(len(y), bool),
                             tolerance=1.0, relative_tolerance=0.1)
