"""Copies in an update equal the full run on old + new rows (CHECKS.md, "Updates").

Exact copies, copies with conflicting labels (each policy) and near copies
(the leader scheme, conflicts reported or dropped) on scikit-learn's bundled
iris, wine and breast cancer tables with a seeded share of rows sent again
(some with another label, some moved slightly), split 80/20 and 98/2. Near
copies keep the first row of a group in input order, so new rows, which come
after the old ones, join old groups or lead new ones (common practice, no
source; the module docstring of ``curate.methods.near`` states the scheme).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
from update_fixtures import assert_same_as_full_run, open_table, pipeline, run_and_update, stage_report

COPIES: dict[str, list[dict[str, Any]]] = {
    "exact": [{"method": "exact-duplicates"}],
    "conflicting-drop-all": [{"method": "conflicting-duplicates"}],
    "conflicting-keep-majority": [{"method": "exact-duplicates"},
                                  {"method": "conflicting-duplicates",
                                   "policy": "keep-majority"}],
    "near-report": [{"method": "near-duplicates", "radius": 0.02,
                     "max_removed_share": 0.9}],
}


@pytest.mark.parametrize("kind", sorted(COPIES))
@pytest.mark.parametrize("share", [0.8, 0.98])
@pytest.mark.parametrize("name", ["iris", "breast_cancer"])
def test_update_equals_full_run(tmp_path: Path, kind: str, share: float, name: str) -> None:
    """Same kept, removed and audit as the full run; the stages worked incrementally."""
    moved = 0.004 if kind.startswith("near") else 0.0
    table = open_table(name, copies=60, moved=moved, seed=11)
    case = run_and_update(tmp_path, table, pipeline(COPIES[kind]), share)
    assert_same_as_full_run(case)
    assert all(s["mode"] == "incremental" for s in case.updated.summary["update"]["stages"])
    assert case.updated.summary["update"]["equals_full_run"] is True


def test_copies_of_old_rows_are_removed_with_the_old_row_as_kept_as(tmp_path: Path) -> None:
    """A new exact copy of an old row is removed and points to the old row, as in a full run;
    a conflicting copy makes the old row leave too (drop-all)."""
    table = open_table("wine", copies=40, seed=12)
    stages = [{"method": "exact-duplicates"}, {"method": "conflicting-duplicates"}]
    case = run_and_update(tmp_path, table, pipeline(stages), 0.8)
    assert_same_as_full_run(case)
    assert stage_report(case, 1)["old_rows_removed_now"] > 0


def test_near_copies_dropping_conflicts_equal_full_run(tmp_path: Path) -> None:
    """conflicts = "drop": a new row near an old one of another label removes both; the
    stage reruns in full then, and says why."""
    table = open_table("wine", copies=40, moved=0.004, seed=13)
    stages = [{"method": "near-duplicates", "radius": 0.02, "conflicts": "drop",
               "max_removed_share": 0.9}]
    case = run_and_update(tmp_path, table, pipeline(stages), 0.8)
    assert_same_as_full_run(case)
    report = stage_report(case, 0)
    assert report["mode"] == "full rerun" and "conflicts" in report["why"]


def test_chained_copies_equal_full_run(tmp_path: Path) -> None:
    """Two updates in a row on copies and conflicts, then ENN on what is left."""
    table = open_table("breast_cancer", copies=80, moved=0.0, seed=14)
    stages = [{"method": "exact-duplicates"}, {"method": "conflicting-duplicates",
                                               "policy": "keep-majority"},
              {"method": "enn", "max_removed_share": 0.9}]
    case = run_and_update(tmp_path, table, pipeline(stages), 0.8, parts=2)
    assert_same_as_full_run(case)
