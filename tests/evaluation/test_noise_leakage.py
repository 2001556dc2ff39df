"""Label-noise stages in `curate evaluate`: they run inside each training fold, with their own
inner folds, so the test folds keep their flipped labels and no score beats the noise ceiling.

Outside reference: the label-noise ceiling. When a share rho of labels is flipped at random
between two classes, no classifier can expect accuracy above (1 - rho)(1 - R*) + rho R* on
those noisy labels (the flips are independent of the features), R* = Phi(-mu) the Bayes
error of the clean problem (two unit Gaussians at -mu and +mu). scikit-learn's
``cross_val_score`` gives the curate-first score, which does beat it.
"""

from __future__ import annotations

import math

import pytest
from evaluate_fixtures import gaussians_csv, spec_for
from scipy.stats import norm
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import MinMaxScaler

from curate.api import run
from curate.evaluation.crossval import evaluate

ROWS, MU, RHO, K = 1000, 1.5, 0.2, 7


@pytest.mark.parametrize("method", ["committee", "class-thresholds"])
def test_noise_stages_cannot_see_the_test_folds(tmp_path, method) -> None:
    path, _, _ = gaussians_csv(tmp_path, ROWS, MU, dims=2, seed=5, flip=RHO)
    stages = [{"method": method, "models": ["knn", "linear"], "folds": 3,
               "max_removed_share": 1.0}]
    spec = spec_for(path, "y", stages)
    bayes = norm.cdf(-MU)
    ceiling = (1 - RHO) * (1 - bayes) + RHO * bayes
    slack = 3 * math.sqrt(ceiling * (1 - ceiling) / ROWS)

    out = evaluate(spec, folds=5, ks=[K], seed=0)
    cured = next(r for r in out["results"] if r["curated"])
    assert cured["accuracy"] <= ceiling + slack
    kept = run(spec).kept
    first = cross_val_score(make_pipeline(MinMaxScaler(), KNeighborsClassifier(n_neighbors=K)),
                            kept.select("x0", "x1").to_numpy(), kept["y"].to_numpy(),
                            cv=StratifiedKFold(n_splits=5, shuffle=True, random_state=0)).mean()
    assert first > ceiling + 0.05, "curating first removes the noisy test rows too"
