"""An update of a regression run equals the full run on old + new rows (CHECKS.md, "Updates").

RegENN and the regression hardness score (Kordos and Blachnik 2012; a residual
against the k nearest neighbours' mean) judge each row by its k nearest rows,
so the update brings their neighbour lists up to date; conflicting targets
are judged again per group of equal rows; the committee and RegCNN run again
in full. Either way the kept rows, removed rows, reasons and evidence must be
the full run's. The task and the target's quantile bins come from the run's
rows, as the fitted space does. Table: scikit-learn's bundled diabetes set
(Efron et al. 2004) with a seeded 5% of targets moved by 3 to 5 standard
deviations and a seeded 3% of rows sent again with another target.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import polars as pl
import pytest
from sklearn.datasets import load_diabetes
from update_fixtures import assert_same_as_full_run, pipeline, run_and_update, stage_report

from curate.evaluation.regression_stats import inject_outliers


def diabetes_table(seed: int = 0) -> pl.DataFrame:
    x, y = load_diabetes(return_X_y=True)
    rng = np.random.default_rng(seed)
    y, _ = inject_outliers(y, 0.05, seed)
    copies = rng.choice(len(y), int(0.03 * len(y)), replace=False)
    x = np.vstack([x, x[copies]])
    y = np.concatenate([y, y[copies] + rng.uniform(50, 100, len(copies))])
    order = rng.permutation(len(y))
    frame = pl.DataFrame({f"c{j}": x[order, j] for j in range(x.shape[1])})
    return frame.with_columns(pl.Series("y", y[order]),
                              pl.Series("reading", 1000 + 7 * np.arange(len(y))))


@pytest.mark.parametrize("share", [0.8, 0.98])
def test_regression_update_equals_full_run(tmp_path: Path, share: float) -> None:
    stages = [{"name": "conflicts", "method": "conflicting-duplicates", "tolerance": 10.0},
              {"name": "targets", "method": "reg-enn", "k": 9},
              {"name": "hard", "method": "hardness", "k": 9, "threshold": 2.0},
              {"name": "committee", "method": "committee", "models": ["knn", "linear"]},
              {"name": "condense", "method": "reg-cnn", "max_removed_share": 1.0}]
    case = run_and_update(tmp_path, diabetes_table(), pipeline(stages, task="regression"),
                          share)
    assert case.updated.summary["task"]["task"] == "regression"
    assert_same_as_full_run(case)
    assert stage_report(case, 1)["mode"] == "incremental"
    assert stage_report(case, 2)["mode"] == "incremental"
    assert stage_report(case, 0)["mode"] == "full rerun"
    assert stage_report(case, 3)["mode"] == "full rerun"
