"""`curate evaluate --vary` on a regression table: ranked by RMSE, lowest first.

Outside references: scikit-learn's ``cross_val_score`` (``KNeighborsRegressor``
after ``MinMaxScaler``, root mean squared error) on the same folds —
``StratifiedKFold`` over ten quantile bins of the target, the folds
``curate evaluate`` documents for regression — for the uncurated RMSE every
variant shares; scipy's Student t distribution with the variance correction of
Nadeau and Bengio (2003) for the paired test; scikit-learn's bundled diabetes
set (open data shipped in a package) as data.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import polars as pl
import pytest
from scipy import stats
from sklearn.datasets import load_diabetes
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsRegressor
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import MinMaxScaler

from curate.cli import main
from curate.evaluation.variants import NONE

FOLDS, SEED = 4, 1


@pytest.fixture(scope="module")
def varied(tmp_path_factory: pytest.TempPathFactory) -> tuple[dict, Path]:
    folder = tmp_path_factory.mktemp("regression-variants")
    x, y = load_diabetes(return_X_y=True)
    frame = pl.DataFrame(x, schema=[f"f{j}" for j in range(x.shape[1])], orient="row")
    frame.with_columns(pl.Series("y", y)).write_csv(folder / "diabetes.csv")
    path = folder / "targets.toml"
    path.write_text('[input]\npath = "diabetes.csv"\nlabel = "y"\n\n[[stages]]\n'
                    'name = "targets"\nmethod = "reg-enn"\n')
    out = folder / "compared"
    assert main(["evaluate", str(path), "--vary", "targets.method=reg-enn,committee,hardness",
                 "--folds", str(FOLDS), "--k", "5", "--seed", str(SEED), "--quiet",
                 "--out", str(out)]) == 0
    return json.loads((out / "evaluation.json").read_text()), out


def test_no_curation_is_scikit_learns_cross_validated_knn_regressor(varied) -> None:
    result, _ = varied
    x, y = load_diabetes(return_X_y=True)
    cv = StratifiedKFold(FOLDS, shuffle=True, random_state=SEED).split(
        x, pd.qcut(y, 10, labels=False))
    expected = -cross_val_score(make_pipeline(MinMaxScaler(), KNeighborsRegressor(5)), x, y,
                                cv=list(cv), scoring="neg_root_mean_squared_error").mean()
    none = next(r for r in result["ranking"] if r["variant"] == NONE)
    assert none["rmse"] == pytest.approx(expected, rel=1e-12)


def test_ranked_by_rmse_lowest_first_with_corrected_paired_tests(varied) -> None:
    result, _ = varied
    ranking = result["ranking"]
    assert [r["rmse"] for r in ranking] == sorted(r["rmse"] for r in ranking)
    assert {r["variant"] for r in ranking} == {NONE, "targets.method=reg-enn",
                                               "targets.method=committee",
                                               "targets.method=hardness"}
    folds = {r["variant"]: np.array(r["fold_rmse"]) for r in result["results"]}
    for row in ranking:
        if row["variant"] == NONE:
            continue
        d = folds[row["variant"]] - folds[NONE]
        assert row["difference_to_none"] == pytest.approx(d.mean(), abs=1e-9)
        if d.var() > 0:
            t = d.mean() / np.sqrt((1 / len(d) + 1 / (FOLDS - 1)) * d.var(ddof=1))
            assert row["p_value_to_none"] == pytest.approx(2 * stats.t.sf(abs(t), len(d) - 1))
    assert result["recommendation"].startswith("on this table")
    assert "RMSE" in result["recommendation"]


def test_the_report_ranks_by_rmse(varied) -> None:
    result, out = varied
    page = (out / "report.html").read_text()
    assert "RMSE, lowest first" in page
    assert f'data-key="evaluation.ranking.0.rmse" data-value="{result["ranking"][0]["rmse"]}"' \
        in page


def test_terminal_ranking_names_rmse(varied, capsys) -> None:
    _, out = varied
    path = out.parent / "targets.toml"
    assert main(["evaluate", str(path), "--vary", "targets.alpha=2,3", "--folds", "3",
                 "--k", "5", "--quiet"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert "ranked by 5-NN RMSE (lowest first)" in lines[0]
    assert lines[-1].startswith("on this table")
