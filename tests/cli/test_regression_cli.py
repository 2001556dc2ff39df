"""Regression tables on the command line: task choice, bad targets, wrong methods, evaluate.

Exit codes are our contract (README): 2 bad usage or pipeline file, 3 an input that
cannot be used; a clean failure (common practice, no source) leaves no run folder.
Outside references: scikit-learn's bundled diabetes set, whose documentation
calls its target a quantitative measure (regression); scikit-learn's
``KNeighborsRegressor`` scored by ``cross_val_score`` on the same folds; numpy's
mean, standard deviation and quantiles for the target's description.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import polars as pl
import pytest
from sklearn.datasets import load_diabetes
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsRegressor
from sklearn.pipeline import make_pipeline as sk_pipeline
from sklearn.preprocessing import MinMaxScaler
from test_bad_input import assert_clean_failure, run_cli

from curate.cli import main

REG_ENN = [{"name": "targets", "method": "reg-enn", "k": 5}]


@pytest.fixture(scope="module")
def diabetes() -> pl.DataFrame:
    x, y = load_diabetes(return_X_y=True)
    frame = pl.DataFrame(x, schema=[f"f{j}" for j in range(x.shape[1])], orient="row")
    return frame.with_columns(pl.Series("y", y))


def test_run_says_which_task_and_why_and_describes_the_target(make_pipeline, diabetes, tmp_path,
                                                               capsys) -> None:
    path = make_pipeline(diabetes, REG_ENN, {"unit": "points"})
    assert main(["run", str(path)]) == 0
    err = capsys.readouterr().err
    assert "task: regression (column 'y' holds 214 distinct whole numbers" in err
    summary = json.loads((tmp_path / "run" / "summary.json").read_text())
    assert summary["task"]["task"] == "regression" and summary["classes_in"] == {}
    y = diabetes["y"].to_numpy()
    before = summary["target"]["before"]
    assert before["rows"] == len(y) and before["mean"] == pytest.approx(y.mean())
    assert before["sd"] == pytest.approx(y.std()) and before["median"] == np.median(y)
    kept = pl.read_parquet(tmp_path / "run" / "kept.parquet")["y"].to_numpy()
    assert summary["target"]["after"]["q75"] == pytest.approx(np.quantile(kept, 0.75))
    audit = pl.read_parquet(tmp_path / "run" / "audit.parquet")
    assert audit["detail"].str.contains(" points is ").all()
    page = (tmp_path / "run" / "report.html").read_text()
    assert 'id="target"' in page and 'id="residuals"' in page and 'id="classes"' not in page
    assert "On a numeric target the tails are the unusual" in page  # the caution (mission)
    assert f'data-key="target.before.mean" data-value="{before["mean"]}"' in page


def test_check_reports_the_task(make_pipeline, diabetes, capsys) -> None:
    path = make_pipeline(diabetes, REG_ENN)
    assert main(["check", str(path)]) == 0
    assert "task: regression (" in capsys.readouterr().out


def test_a_classification_method_on_a_regression_table_is_exit_2(make_pipeline, diabetes,
                                                                   capsys) -> None:
    path = make_pipeline(diabetes, [{"name": "mislabels", "method": "enn", "k": 3}])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, "stage 'mislabels'", "method 'enn' compares classes",
                         "reg-enn", "discretized")


@pytest.mark.parametrize(("values", "words"), [
    (["short", "long"] * 10, "holds text"),
    # The schema's own not-null rule stops missing targets first (NaN counts as missing).
    ([1.5, float("nan")] * 10, "column 'y' failed not_nullable: 10 rows (first: 1, 3, 5, 7, 9)"),
    ([7.25] * 20, "every one of the 20 rows has the target 7.25"),
])
def test_a_bad_target_for_a_regression_method_is_exit_3(make_pipeline, values, words,
                                                        capsys) -> None:
    frame = pl.DataFrame({"x": np.arange(20.0), "y": values})
    path = make_pipeline(frame, REG_ENN)
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "table.csv", "'y'", words)


def test_evaluate_scores_rmse_like_scikit_learn_and_scores_outliers(make_pipeline, diabetes,
                                                                    capsys) -> None:
    path = make_pipeline(diabetes, REG_ENN)
    assert main(["evaluate", str(path), "--folds", "3", "--k", "5", "--inject-noise", "0.05",
                 "--json", "--quiet"]) == 0
    out = json.loads(capsys.readouterr().out)
    plain = next(r for r in out["results"] if r["k"] == 5 and not r["curated"])
    assert {"rmse", "mae", "r2"} <= set(plain) and "baseline_rmse" in out
    assert out["noise"]["kind"] == "outliers" and out["noise"]["moved"] > 0
    # Without injected outliers the uncurated fold scores are scikit-learn's.
    assert main(["evaluate", str(path), "--folds", "3", "--k", "5", "--json", "--quiet"]) == 0
    clean = json.loads(capsys.readouterr().out)
    x, y = diabetes.drop("y").to_numpy(), diabetes["y"].to_numpy()
    cv = StratifiedKFold(3, shuffle=True, random_state=0).split(x, pd.qcut(y, 10, labels=False))
    expected = -cross_val_score(sk_pipeline(MinMaxScaler(), KNeighborsRegressor(5)), x, y,
                                cv=list(cv), scoring="neg_root_mean_squared_error")
    got = next(r for r in clean["results"] if r["k"] == 5 and not r["curated"])["fold_rmse"]
    np.testing.assert_allclose(got, expected, rtol=1e-12)


def test_evaluate_text_and_noise_towards(make_pipeline, diabetes, capsys) -> None:
    path = make_pipeline(diabetes, REG_ENN)
    assert main(["evaluate", str(path), "--folds", "3", "--k", "1,5", "--quiet"]) == 0
    text = capsys.readouterr().out
    assert "stratified by target quantiles" in text and "training-mean baseline RMSE" in text
    assert main(["evaluate", str(path), "--folds", "3", "--inject-noise", "0.1",
                 "--noise-towards", "high", "--quiet"]) == 2
    assert "names a class" in capsys.readouterr().err


def test_missing_targets_the_schema_allows_still_stop_a_regression_run(make_pipeline,
                                                                      capsys) -> None:
    frame = pl.DataFrame({"x": np.arange(20.0), "y": [1.5, None] * 10})
    path = make_pipeline(frame, REG_ENN, extra={"input.columns.y": {"nullable": True}})
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "table.csv, column 'y'",
                         "10 rows (first: 1, 3, 5, 7, 9) have no finite target value")


def test_evaluate_out_writes_a_report_that_agrees_with_its_json(make_pipeline, diabetes,
                                                                tmp_path) -> None:
    path = make_pipeline(diabetes, REG_ENN)
    out = tmp_path / "evaluation"
    assert main(["evaluate", str(path), "--folds", "3", "--k", "1,5", "--inject-noise", "0.05",
                 "--out", str(out), "--quiet"]) == 0
    result = json.loads((out / "evaluation.json").read_text())
    page = (out / "report.html").read_text()
    assert f'data-key="evaluation.baseline_rmse" data-value="{result["baseline_rmse"]}"' in page
    first = result["results"][0]
    assert f'data-key="evaluation.results.0.rmse" data-value="{first["rmse"]}"' in page
    assert "Injected outliers" in page and "RMSE against k" in page and 'id="target"' in page


def test_committee_relabels_targets_with_numbers_and_the_report_says_so(make_pipeline, diabetes,
                                                                        tmp_path, capsys) -> None:
    """The regression committee through a run: the label column is never changed; the
    suggested value is the committee's out-of-fold mean prediction (checked against
    scikit-learn in tests/methods/test_regression_committee.py), a number here too."""
    from curate.evaluation.regression_stats import inject_outliers

    moved_y, moved = inject_outliers(diabetes["y"].to_numpy(), 0.05, 3)
    frame = diabetes.with_columns(pl.Series("y", moved_y))
    path = make_pipeline(frame, [{"name": "targets", "method": "committee",
                                  "action": "relabel", "unit": "points"}])
    assert main(["run", str(path), "--quiet"]) == 0
    run = tmp_path / "run"
    kept = pl.read_parquet(run / "kept.parquet")
    assert kept.height == frame.height and kept["y"].equals(frame["y"])
    assert kept.schema["suggested_label"] == pl.Float64
    flagged = pl.read_parquet(run / "flagged.parquet")
    assert flagged.height > 0 and moved[flagged["row_id"].to_numpy()].mean() >= 0.9
    suggested = kept.filter(pl.col("suggested_label").is_not_null())
    assert sorted(suggested["row_id"].to_list()) == sorted(flagged["row_id"].to_list())
    summary = json.loads((run / "summary.json").read_text())
    assert summary["doubt"]["measure"].startswith("|target - the committee's mean")
    assert set(summary["doubt"]["at_least"]) == {"1", "2", "3"}
    page = (run / "report.html").read_text()
    assert "Doubt about targets" in page and "standard deviations of the target" in page
    row = str(flagged["row_id"][0])
    assert main(["why", row, "--run", str(run)]) == 0
    text = capsys.readouterr().out
    assert "suggests the value" in text and " points is " in text
    assert main(["review", "--run", str(run), "--out", str(tmp_path / "review.csv")]) == 0
    said = capsys.readouterr().err
    assert f"wrote 0 removed rows and {flagged.height} rows a label-noise stage flagged but " \
           "kept" in said
    review = pl.read_csv(tmp_path / "review.csv")
    assert review["action"].unique().to_list() == ["relabel"]
    assert review["doubt"].to_list() == sorted(review["doubt"].to_list(), reverse=True)


def test_committee_folds_above_the_rows_is_exit_2(make_pipeline, capsys) -> None:
    """Each fold needs a row (common practice, no source): the stage is stopped before it
    runs, with the fold count that would work."""
    frame = pl.DataFrame({"x": np.arange(8.0), "y": np.arange(8.0) * 1.5})
    path = make_pipeline(frame, [{"name": "targets", "method": "committee", "folds": 10}],
                         {"task": "regression"})
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, "stage 'targets'", "folds = 10",
                         "only 8 rows", "lower folds to 8")
