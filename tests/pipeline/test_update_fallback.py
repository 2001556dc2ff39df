"""Methods without an incremental form rerun in full in an update, and say so.

RENN (Tomek 1976) repeats ENN's rounds over the whole stage, DROP3 (Wilson
and Martinez 2000) and ICF (Brighton and Mellish 2002) decide by whole-set
passes, OSS (Kubat and Matwin 1997) by a CNN store and Tomek links: an update
runs them again on the stage's new rows, which is by definition the full
run's result (compared with the full run on old + new rows, CHECKS.md).
Table: scikit-learn's bundled wine, split 80/20.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from update_fixtures import assert_same_as_full_run, open_table, pipeline, run_and_update, stage_report


@pytest.mark.parametrize("method", ["renn", "drop3", "icf", "oss"])
def test_full_rerun_said_and_equal(tmp_path: Path, method: str) -> None:
    """The stage reruns in full (the summary names the method); Tomek links follow, on
    lists brought up to date from the rows the rerun kept."""
    table = open_table("wine", flip=0.08, seed=31)
    stages = [{"method": method, "max_removed_share": 0.99},
              {"method": "tomek-links", "max_removed_share": 0.9}]
    case = run_and_update(tmp_path, table, pipeline(stages), 0.8)
    assert_same_as_full_run(case)
    report = stage_report(case, 0)
    assert report["mode"] == "full rerun" and method in report["why"]
    assert report["old_rows_rejudged"] == case.old_rows
    assert case.updated.summary["update"]["equals_full_run"] is True
