"""The sampler passes scikit-learn's own estimator checks, and imbalanced-learn's sampler checks
where they apply.

Outside references: ``sklearn.utils.estimator_checks.check_estimator`` and the
checks in ``imblearn.utils.estimator_checks``.

scikit-learn's checks run on tiny data (classes of 3 to 5 rows). curate
refuses ``k`` at or above the size of a class a stage may remove (a
``UsageError`` naming the class and the fix), so methods with a ``k`` run the
checks with ``k = 2``. No check is expected to fail: none is skipped or
marked as an expected failure. Likewise methods that cross-validate (label noise)
need every class to fill each fold, so they run with ``folds = 2`` and a
committee of a 2-NN vote and a decision tree.

imbalanced-learn checks left out, and why:

* ``check_samplers_fit``: asks for ``sampling_strategy_``; curate's methods
  do not target row counts per class, so the sampler has no sampling strategy.
* ``check_samplers_sparse``, ``check_samplers_pandas_sparse``: sparse input is
  not supported (the sampler says so with scikit-learn's own error, which
  scikit-learn's sparse checks verify).
* ``check_samplers_multiclass_ova``: one-hot targets are refused with a clear
  error; labels are one column.
* ``check_samplers_string``: text features go in a data frame (pandas or
  polars), where their column type says they are nominal.
* ``check_samplers_sample_indices``, ``check_param_validation``: read
  imbalanced-learn's own tag and constraint objects; ``sample_indices_`` is
  tested directly below.
"""

from __future__ import annotations

from typing import Any

import imblearn.utils.estimator_checks as imblearn_checks
import numpy as np
import pytest
from sklearn.utils.estimator_checks import check_estimator

from curate import Sampler
from curate.methods import METHODS

REQUIRED = {"near-duplicates": {"radius": 0.1}}
IMBLEARN_CHECKS = ("check_target_type", "check_samplers_one_label", "check_samplers_fit_resample",
                   "check_samplers_sampling_strategy_fit_resample", "check_samplers_pandas",
                   "check_samplers_list", "check_samplers_2d_target",
                   "check_samplers_preserve_dtype", "check_sampler_get_feature_names_out",
                   "check_sampler_get_feature_names_out_pandas",
                   "check_dataframe_column_names_consistency")
# Copies are copies whatever the classes: one class is no error for exact-duplicates.
IMBLEARN_CASES = [("enn", check) for check in IMBLEARN_CHECKS] + [
    ("exact-duplicates", check) for check in IMBLEARN_CHECKS if check != "check_samplers_one_label"]


def sampler_for_checks(key: str, **settings: Any) -> Sampler:
    """A sampler of ``key`` with the parameters the checks' tiny data allow."""
    params = dict(REQUIRED.get(key, {}))
    if METHODS[key].param("k") is not None:
        params["k"] = 2
    if METHODS[key].param("folds") is not None:
        params["folds"] = 2
        params["models"] = [{"model": "knn", "params": {"k": 2}}, "tree"]
    return Sampler(method=key, params=params or None, **settings)


@pytest.mark.parametrize("key", sorted(METHODS))
def test_scikit_learn_estimator_checks(key: str) -> None:
    """Every check that scikit-learn runs for this estimator passes.

    The one check scikit-learn itself skips here, ``check_array_api_input``,
    needs the environment variable SCIPY_ARRAY_API and an array library.
    """
    results = check_estimator(sampler_for_checks(key), on_fail=None, on_skip=None)
    failed = {r["check_name"]: repr(r["exception"]) for r in results if r["status"] != "passed"
              and r["check_name"] != "check_array_api_input"}
    assert failed == {}, f"method {key!r}: scikit-learn checks did not pass: {failed}"
    assert sum(r["status"] == "passed" for r in results) >= 30


@pytest.mark.parametrize("key, check", IMBLEARN_CASES)
def test_imbalanced_learn_sampler_checks(key: str, check: str) -> None:
    """imbalanced-learn's sampler checks that apply to a sampler without a sampling strategy.

    They check a classification sampler (``check_target_type`` expects a continuous
    target to be refused), so the task is pinned: with ``task="auto"`` a method that
    also has a regression form reads a continuous target as a regression table.
    """
    getattr(imblearn_checks, check)("Sampler", sampler_for_checks(key, task="classification"))


@pytest.mark.parametrize("missing", ["impute", "far"])
def test_imbalanced_learn_nan_check(missing: str) -> None:
    """With a missing-value policy, NaN features pass through (imbalanced-learn's nan check)."""
    imblearn_checks.check_samplers_nan("Sampler", Sampler(method="enn", missing=missing))


def test_sample_indices_name_the_returned_rows() -> None:
    """``sample_indices_`` are the input positions of the rows returned (common practice,
    as imbalanced-learn's samplers define it)."""
    X, y = imblearn_checks.sample_dataset_generator()
    sampler = Sampler(method="enn")
    X_res, y_res = sampler.fit_resample(X, y)
    np.testing.assert_array_equal(X_res, X[sampler.sample_indices_])
    np.testing.assert_array_equal(y_res, y[sampler.sample_indices_])
