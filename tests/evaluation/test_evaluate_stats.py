"""The paired test across folds and the label flips, against their definitions and scipy.

Outside references: Nadeau and Bengio (2003), "Inference for the generalization
error", Machine Learning 52, 239-281: the corrected resampled t statistic
``mean(d) / sqrt((1/J + n_test/n_train) * var(d))`` with J - 1 degrees of
freedom; scipy.stats.ttest_rel for the uncorrected paired t-test; scipy.stats.t
for the tail probability; scipy.stats.chisquare for uniform flips.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats as sps

from curate.evaluation.stats import corrected_resampled_ttest, flip_labels, majority_accuracy


def paired(seed: int, j: int = 10) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    a = rng.uniform(0.7, 0.9, size=j)
    return a, a + rng.normal(0.01, 0.02, size=j)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_corrected_statistic_follows_the_published_formula(seed: int) -> None:
    a, b = paired(seed, j=30)  # e.g. 10-fold cross-validation repeated 3 times
    n_train, n_test = 900, 100
    d = [x - y for x, y in zip(a, b, strict=True)]
    j = len(d)
    mean = sum(d) / j
    var = sum((v - mean) ** 2 for v in d) / (j - 1)
    t_direct = mean / math.sqrt((1 / j + n_test / n_train) * var)
    p_direct = 2 * (1 - sps.t.cdf(abs(t_direct), df=j - 1))
    t, p = corrected_resampled_ttest(a, b, n_test / n_train)
    assert t == pytest.approx(t_direct, rel=1e-10)
    assert p == pytest.approx(p_direct, rel=1e-8)


@pytest.mark.parametrize("seed", [3, 4])
def test_without_correction_it_is_scipys_paired_t_test(seed: int) -> None:
    a, b = paired(seed)
    t, p = corrected_resampled_ttest(a, b, 0.0)
    ref = sps.ttest_rel(a, b)
    assert t == pytest.approx(ref.statistic, rel=1e-10)
    assert p == pytest.approx(ref.pvalue, rel=1e-10)


def test_the_correction_only_makes_the_test_more_cautious() -> None:
    # Nadeau and Bengio: the plain test ignores the overlap of training sets, so its
    # variance is too small; the corrected p-value is never smaller.
    a, b = paired(5)
    assert corrected_resampled_ttest(a, b, 1 / 9)[1] >= corrected_resampled_ttest(a, b, 0.0)[1]


def test_zero_variance_differences() -> None:
    assert corrected_resampled_ttest([0.8, 0.9], [0.8, 0.9], 0.1) == (0.0, 1.0)
    t, p = corrected_resampled_ttest([0.9, 0.9], [0.8, 0.8], 0.1)
    assert t == math.inf and p == 0.0


def test_flips_have_the_asked_count_and_always_change_the_class() -> None:
    labels = np.repeat(np.array(["a", "b", "c"]), [500, 300, 200])
    new, flipped = flip_labels(labels, 0.25, seed=7)
    assert flipped.sum() == 250
    assert np.all(new[flipped] != labels[flipped]) and np.all(new[~flipped] == labels[~flipped])


def test_flips_go_uniformly_to_the_other_classes() -> None:
    """Each flipped 'a' becomes 'b' or 'c' with probability 1/2: a chi-square goodness of
    fit test (scipy) must not reject at the 0.1% level (seeded, so it is deterministic)."""
    labels = np.array(["a"] * 4000 + ["b"] * 10 + ["c"] * 10)
    new, flipped = flip_labels(labels, 0.5, seed=11)
    from_a = new[flipped & (labels == "a")]
    counts = [np.sum(from_a == "b"), np.sum(from_a == "c")]
    assert sps.chisquare(counts).pvalue > 0.001


def test_flips_towards_one_class() -> None:
    labels = np.array([1, 1, 1, 2, 2, 3, 3, 3, 3, 3])
    new, flipped = flip_labels(labels, 0.4, seed=2, towards="2")
    assert flipped.sum() == 4
    assert np.all(new[flipped] == 2) and np.all(labels[flipped] != 2)
    assert np.array_equal(flip_labels(labels, 0.4, seed=2, towards="2")[0], new)  # seeded


def test_majority_accuracy_counts_the_most_frequent_training_class() -> None:
    # Hand count: training majority is "b"; two of four test labels are "b".
    assert majority_accuracy(np.array(list("abbbc")), np.array(list("abbc"))) == 0.5
