"""Leakage guard: curating before splitting inflates the score; `evaluate` does not.

Outside references: scikit-learn's ``cross_val_score`` (StratifiedKFold,
MinMaxScaler and KNeighborsClassifier) for the curate-first score; and the
label-noise ceiling: when a share rho of labels is flipped at random between two
classes, no classifier can expect accuracy above (1 - rho)(1 - R*) + rho R* on
those noisy labels (the flips are independent of the features), R* = Phi(-mu)
the Bayes error of the clean problem (two unit Gaussians at -mu and +mu).
"""

from __future__ import annotations

import math

import numpy as np
from evaluate_fixtures import gaussians_csv, spec_for
from scipy.stats import norm
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import MinMaxScaler

from curate.api import run
from curate.evaluation.crossval import evaluate

ROWS, MU, RHO, K = 1500, 1.5, 0.2, 7


def test_curating_first_inflates_and_evaluate_does_not(tmp_path) -> None:
    path, x, y = gaussians_csv(tmp_path, ROWS, MU, dims=2, seed=5, flip=RHO)
    stages = [{"method": "enn", "k": 3, "max_removed_share": 1.0}]
    spec = spec_for(path, "y", stages)
    bayes = norm.cdf(-MU)
    ceiling = (1 - RHO) * (1 - bayes) + RHO * bayes
    slack = 3 * math.sqrt(ceiling * (1 - ceiling) / ROWS)

    kept = run(spec).kept
    cv = StratifiedKFold(n_splits=5, shuffle=True, random_state=0)
    features = kept.select("x0", "x1").to_numpy()
    first = cross_val_score(make_pipeline(MinMaxScaler(), KNeighborsClassifier(n_neighbors=K)),
                            features, kept["y"].to_numpy(), cv=cv).mean()

    out = evaluate(spec, folds=5, ks=[K], seed=0)
    plain, cured = (next(r for r in out["results"] if r["curated"] == c) for c in (False, True))
    # Evaluate tests on folds that keep their noisy rows: no score beats the ceiling.
    assert cured["accuracy"] <= ceiling + slack
    assert abs(cured["accuracy"] - plain["accuracy"]) < 0.05
    # Curating the whole table first removed the noisy test rows too: an inflated score.
    assert first > ceiling + 0.1
    assert first > cured["accuracy"] + 0.1
    assert np.isclose(out["baseline_accuracy"], max(np.mean(y), 1 - np.mean(y)), atol=0.01)
