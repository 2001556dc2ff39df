"""Label-noise stages in an update: flagged rows and suggested labels equal the full run's.

The committee (Brodley and Friedl 1999) reruns in full on an update (its folds
depend on every row), so the rows it flags and keeps, the labels or values it
suggests and its doubt scores must be exactly those of the full run on old +
new rows in the run's fitted space (CHECKS.md, "Updates"). Tables:
scikit-learn's bundled wine with 10% flipped labels, and its diabetes set with
5% of targets moved by 3 to 5 standard deviations, split 80/20.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import polars as pl
import pytest
from test_update_regression import diabetes_table
from update_fixtures import assert_same_as_full_run, open_table, pipeline, run_and_update


def assert_same_flags(case) -> None:
    ours, full = case.updated, case.oracle
    assert ours.flagged is not None and full.flagged is not None and full.flagged.height
    assert ours.flagged.sort("row_id").equals(full.flagged.sort("row_id"))
    assert ours.summary["rows_flagged_kept"] == full.summary["rows_flagged_kept"]
    np.testing.assert_array_equal(ours.scores["doubt"], full.scores["doubt"])
    assert ours.summary["doubt"] == full.summary["doubt"]


@pytest.mark.parametrize("action", ["relabel", "report"])
def test_committee_flags_carry_into_the_updated_folder(tmp_path: Path, action: str) -> None:
    table = open_table("wine", flip=0.1, seed=9)
    stage = {"name": "mislabels", "method": "committee", "models": ["knn", "linear"],
             "folds": 3, "action": action, "min_doubt": 0.5}
    case = run_and_update(tmp_path, table, pipeline([stage]), 0.8)
    assert_same_as_full_run(case)
    assert_same_flags(case)
    if action == "relabel":
        assert list(case.updated.relabel) == list(case.oracle.relabel)
        kept = pl.read_parquet(case.folder / "run1" / "kept.parquet")
        assert kept["suggested_label"].drop_nulls().len() == case.updated.flagged.height
    else:
        assert case.updated.relabel is None
    assert (case.folder / "run1" / "flagged.parquet").exists()


def test_regression_committee_relabels_in_an_update_as_in_a_full_run(tmp_path: Path) -> None:
    stage = {"name": "targets", "method": "committee", "models": ["knn", "linear"],
             "action": "relabel"}
    case = run_and_update(tmp_path, diabetes_table(), pipeline([stage], task="regression"), 0.8)
    assert_same_flags(case)
    assert list(case.updated.relabel) == list(case.oracle.relabel)
