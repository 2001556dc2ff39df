"""The 1-NN error measured by `evaluate` respects the Cover and Hart bound.

Outside reference: Cover and Hart (1967), "Nearest neighbor pattern
classification", IEEE Trans. Information Theory 13(1), 21-27: for two classes the
asymptotic 1-NN error R satisfies R* <= R <= 2 R* (1 - R*), R* the Bayes error.
For equal priors and N(-mu, 1) against N(+mu, 1) the Bayes rule splits at 0 and
R* = Phi(-mu) (scipy.stats.norm). With a few thousand rows in one dimension the
finite-sample error is close to the asymptotic one; the tolerance is three
standard errors of a proportion over all test rows.
"""

from __future__ import annotations

import math

import pytest
from evaluate_fixtures import gaussians_csv, spec_for
from scipy.stats import norm

from curate.evaluation.crossval import evaluate

ROWS = 3000


@pytest.mark.parametrize(("mu", "seed"), [(0.5, 1), (1.0, 2)])
def test_one_nn_error_lies_between_bayes_error_and_its_bound(tmp_path, mu: float,
                                                             seed: int) -> None:
    path, _, _ = gaussians_csv(tmp_path, ROWS, mu, dims=1, seed=seed)
    out = evaluate(spec_for(path, "y"), folds=5, ks=[1], seed=seed)
    (plain,) = [r for r in out["results"] if r["k"] == 1 and not r["curated"]]
    error = 1.0 - plain["accuracy"]
    bayes = norm.cdf(-mu)
    upper = 2 * bayes * (1 - bayes)
    slack = 3 * math.sqrt(upper * (1 - upper) / ROWS)
    assert bayes - slack <= error <= upper + slack, (bayes, error, upper)
    # The bound has room: the measured error is not simply the Bayes error.
    assert error > bayes
