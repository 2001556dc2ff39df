"""Injected outliers: scored per stage like scikit-learn's neighbours find them, and found.

Outside references: the RegENN rule (Kordos and Blachnik 2012) applied by hand
with scikit-learn's ``NearestNeighbors`` and ``MinMaxScaler`` on each training
fold, after the same seeded outlier injection, gives the counts the evaluation
reports. Removing rows at random finds outliers with precision equal to their
share (a fact of sampling, no source); the stages must do far better. Data:
scikit-learn's bundled diabetes set, and the body mass of palmerpenguins'
penguins (Gorman et al. 2014) from bill and flipper measurements.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import polars as pl
import pytest
from palmerpenguins import load_penguins
from sklearn.datasets import load_diabetes
from sklearn.model_selection import StratifiedKFold
from sklearn.neighbors import NearestNeighbors
from sklearn.preprocessing import MinMaxScaler

from curate.evaluation.regression import RegressionPlan, cross_validate_regression, stage_curation
from curate.evaluation.regression import table_fold_spaces as fold_spaces
from curate.evaluation.regression_stats import inject_outliers
from curate.methods.regression import REG_ENN, reg_enn, regression_hardness
from curate.settings import EngineSettings, SpaceSettings
from curate.space import Space

FOLDS, SEED, SHARE = 4, 2, 0.05


def penguins() -> tuple[np.ndarray, np.ndarray]:
    frame = load_penguins().dropna(subset=["bill_length_mm", "bill_depth_mm",
                                           "flipper_length_mm", "body_mass_g"])
    x = frame[["bill_length_mm", "bill_depth_mm", "flipper_length_mm"]].to_numpy(float)
    return x, frame["body_mass_g"].to_numpy(float)


def test_outliers_are_scored_per_stage_like_the_rule_finds_them() -> None:
    x, y = load_diabetes(return_X_y=True)
    frame = pl.DataFrame(x, schema=[f"f{j}" for j in range(x.shape[1])], orient="row")
    spaces = fold_spaces(frame, {c: "float" for c in frame.columns}, SpaceSettings(),
                         EngineSettings(), list(range(len(y))))
    out = cross_validate_regression(y, spaces, stage_curation([(REG_ENN, {})], SEED),
                                    stage_names=["targets"], catches=[REG_ENN.catches],
                                    plan=RegressionPlan(folds=FOLDS, ks=(5,), outliers=SHARE,
                                                        seed=SEED))
    removed = found = moved_total = 0
    cv = StratifiedKFold(n_splits=FOLDS, shuffle=True, random_state=SEED)
    for number, (train, _) in enumerate(cv.split(x, pd.qcut(y, 10, labels=False))):
        noisy, moved = inject_outliers(y[train], SHARE, [SEED, 0, number])
        xt = MinMaxScaler().fit_transform(x[train])
        around = noisy[NearestNeighbors(n_neighbors=10).fit(xt).kneighbors(xt)[1][:, 1:]]
        gone = np.abs(noisy - around.mean(axis=1)) > 3 * around.std(axis=1)
        removed += int(gone.sum())
        found += int((gone & moved).sum())
        moved_total += int(moved.sum())
    stage = out["noise"]["stages"][0]
    assert (stage["removed"], stage["found"], out["noise"]["moved"]) == (removed, found,
                                                                         moved_total)
    assert out["noise"]["kind"] == "outliers"


@pytest.mark.parametrize("data", [lambda: load_diabetes(return_X_y=True), penguins],
                         ids=["diabetes", "penguins"])
def test_stages_find_outliers_far_better_than_chance(data) -> None:
    x, y = data()
    space = Space.from_matrix(MinMaxScaler().fit_transform(x))
    for seed in range(3):
        noisy, moved = inject_outliers(y, SHARE, seed)
        for sel in (reg_enn(space, noisy, removable=np.ones(len(y), bool)),
                    regression_hardness(space, noisy, removable=np.ones(len(y), bool), k=9,
                                        threshold=2.0)):
            hit = int(moved[sel.removed].sum())
            assert hit / len(sel.removed) > 5 * SHARE  # precision well above the base rate
            assert hit / moved.sum() > 0.5
