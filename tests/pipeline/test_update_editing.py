"""Editing in an update equals the full run on old + new rows (CHECKS.md, "Updates").

ENN (Wilson 1972), All-kNN and Tomek links (Tomek 1976), NCR (Laurikkala
2001) and kDN hardness (Smith, Martinez and Giraud-Carrier 2014): each judges
a row by its k nearest rows, so an update that brings the lists up to date
must reach exactly the full run's kept rows, removed rows, reasons and
evidence. Tables: scikit-learn's bundled wine, breast cancer and digits
(digits' integer pixels make many exact distance ties, which are broken by
input position in both), split 80/20 and 98/2.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import polars as pl
import pytest
from update_fixtures import assert_same_as_full_run, open_table, pipeline, run_and_update, stage_report

EDITING: dict[str, dict[str, Any]] = {
    "enn": {"method": "enn", "k": 3},
    "all-knn": {"method": "all-knn", "k": 4},
    "tomek-links": {"method": "tomek-links"},
    "ncr": {"method": "ncr", "k": 3},
    "hardness": {"method": "hardness", "k": 5, "threshold": 0.6},
}


@pytest.mark.parametrize("method", sorted(EDITING))
@pytest.mark.parametrize("share", [0.8, 0.98])
def test_update_equals_full_run(tmp_path: Path, method: str, share: float) -> None:
    """Breast cancer with 8% flipped labels: same kept, removed and audit as the full run."""
    table = open_table("breast_cancer", flip=0.08, seed=3)
    stage = EDITING[method] | {"max_removed_share": 0.9}
    case = run_and_update(tmp_path, table, pipeline([stage]), share)
    assert_same_as_full_run(case)
    assert case.updated.summary["update"]["equals_full_run"] is True
    assert stage_report(case, 0)["mode"] == "incremental"


@pytest.mark.parametrize("name", ["wine", "digits"])
def test_chained_updates_equal_full_run(tmp_path: Path, name: str) -> None:
    """Two updates in a row (80% run, then 10% and 10%), with a class restriction:
    the second update starts from the first one's run folder."""
    table = open_table(name, flip=0.1, seed=5, rows=400 if name == "digits" else None)
    stages = [{"method": "enn", "k": 3, "max_removed_share": 0.9,
               "classes": "all-but-smallest"},
              {"method": "ncr", "k": 3, "max_removed_share": 0.9}]
    case = run_and_update(tmp_path, table, pipeline(stages), 0.8, parts=2)
    assert_same_as_full_run(case)


def test_update_removes_outvoted_and_restores_rows_with_records(tmp_path: Path) -> None:
    """New rows outvote some kept old rows (removed now, with an audit record) and change
    the vote of some removed ones (restored: kept, no record), as the full run does."""
    table = open_table("breast_cancer", flip=0.08, seed=3)
    case = run_and_update(tmp_path, table, pipeline([EDITING["enn"]]), 0.8)
    assert_same_as_full_run(case)
    report = stage_report(case, 0)
    assert report["old_rows_removed_now"] > 0 and report["old_rows_restored"] > 0
    before = set(_removed_ids(tmp_path / "run0"))
    after = set(case.updated.audit["row_id"].to_list())
    old = set(table["reading"].head(case.old_rows).to_list())
    kept_now = set(case.updated.kept["row_id"].to_list())
    assert len((after - before) & old) == report["old_rows_removed_now"]
    assert len((before - after) & kept_now) == report["old_rows_restored"]


def _removed_ids(run: Path) -> list[int]:
    return pl.read_parquet(run / "audit.parquet")["row_id"].to_list()


def test_update_with_protected_rows_equals_full_run(tmp_path: Path) -> None:
    """Protected rows stay, and protected.parquet records what the stage wanted, as in a
    full run (kept rows, audit and the protected record compared)."""
    table = open_table("wine", flip=0.15, seed=2)
    protect = table["reading"].head(40).to_list()
    case = run_and_update(tmp_path, table, pipeline([EDITING["enn"] | {"max_removed_share": 0.9}],
                                                    protect=protect), 0.8)
    assert_same_as_full_run(case)
    assert case.updated.spared is not None and case.oracle.spared is not None
    assert sorted(case.updated.spared["row_id"].to_list()) == \
        sorted(case.oracle.spared["row_id"].to_list())


def test_update_in_hvdm_space_equals_full_run(tmp_path: Path) -> None:
    """HVDM (Wilson and Martinez 1997): the VDM tables of the nominal columns and the
    numeric columns' standard deviations stay those fitted by the run."""
    table = open_table("wine", flip=0.1, seed=4, nominal=3)
    case = run_and_update(tmp_path, table, pipeline([EDITING["enn"] | {"max_removed_share": 0.9}]),
                          0.8, space={"distance": "hvdm"})
    assert_same_as_full_run(case)


@pytest.mark.parametrize("method", ["enn", "ncr"])
def test_update_with_the_compiled_engine_equals_full_run(tmp_path: Path, method: str) -> None:
    """The compiled engine answers an update's two questions (the new rows' own lists, the old
    rows they get near to) in one pass; digits' exact distance ties included."""
    table = open_table("digits", flip=0.1, seed=6, rows=600)
    stage = EDITING[method] | {"max_removed_share": 0.9}
    case = run_and_update(tmp_path, table, pipeline([stage], backend="fast"), 0.8)
    assert_same_as_full_run(case)
    engine = case.updated.summary["stages"][0]["info"]["engine"]
    assert engine["backends"] == ["fast"]
