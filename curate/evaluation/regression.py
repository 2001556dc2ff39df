"""Leakage-free evaluation for numeric targets: does curation keep the errors down?

The regression counterpart of :mod:`curate.evaluate`, on the same plan:
k-fold cross-validation (shuffled, stratified by the target's quantile bins,
repeated with seeds ``seed, seed + 1, ...``), the space fitted on each fold's
training rows only, the stages run on those rows only, the test fold never
curated, and every model scored on the same folds trained on all training
rows and on the curated ones, so that the comparison is paired.

* The k-nearest-neighbour regressor predicts the mean target of the k
  nearest training rows (scikit-learn's ``KNeighborsRegressor`` with uniform
  weights; the tests check its fold scores against ``cross_val_score``),
  from one search by :func:`curate.neighbours.kneighbors` with the largest k;
  a k above the training rows uses them all, which predicts their mean.
* Any scikit-learn regressor, named by import path, is fitted on the embedded
  matrix.
* RMSE, MAE and R² per fold; the baseline predicts the training fold's mean;
  the paired test is the corrected resampled t-test on the per-fold RMSE.
* ``outliers``: a seeded share of each fold's training targets is moved by
  several standard deviations before curation
  (:func:`curate.evaluation.regression_stats.inject_outliers`), and each stage's
  removals are scored against the moved rows.

:func:`evaluate_regression` evaluates a prepared pipeline (``curate evaluate``
calls it for a regression table); :func:`cross_validate_regression` is the core,
given two functions: how a fold's rows become spaces (:func:`table_fold_spaces`
fits them on a table) and how a fold's training rows are curated (the run's
stage step, or :func:`stage_curation` for method functions on arrays).
"""

from __future__ import annotations

import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import polars as pl

from curate.errors import UsageError
from curate.evaluation import stats
from curate.evaluation.curation import curate_fold
from curate.evaluation.detection import detection_by_stage, recall_by_fault
from curate.evaluation.models import estimator, stack
from curate.evaluation.regression_stats import (
    OUTLIER_SDS,
    inject_outliers,
    mean_baseline_rmse,
    regression_metrics,
    regression_record,
)
from curate.evaluation.stats import KNN, FoldOutcome, Key
from curate.methods import method_for
from curate.methods._targets import quantile_bins, regression_folds
from curate.methods.base import MethodInfo
from curate.neighbours.search import kneighbors
from curate.pipeline.records import Prepared
from curate.settings import K_GRID, EngineSettings, SpaceSettings
from curate.space.build import fit_space
from curate.space.points import Space

__all__ = ["Curation", "FoldSpaces", "RegressionPlan", "cross_validate_regression",
           "evaluate_regression", "knn_regression", "stage_curation", "table_fold_spaces"]

TEST_NAME = ("corrected resampled t-test (Nadeau and Bengio 2003), two-sided, on per-fold RMSE, "
             "curated minus uncurated")

FoldSpaces = Callable[[np.ndarray, np.ndarray, np.ndarray], tuple[Space, Space]]
"""(training positions, test positions, training targets) -> (training space, test space)."""
Curation = Callable[[Space, np.ndarray, np.ndarray], tuple[np.ndarray, list[np.ndarray], list[str]]]
"""(training space, training targets, training positions) -> (kept rows, each stage's removed
rows, stages over their limit), rows as positions in the training space."""


@dataclass(frozen=True)
class RegressionPlan:
    """What to measure: folds, repeats, the k grid, another regressor, injected outliers, seed."""

    folds: int = 10
    repeats: int = 1
    ks: tuple[int, ...] = K_GRID
    model: str | None = None
    model_params: Mapping[str, Any] = field(default_factory=dict)
    outliers: float = 0.0
    seed: int = 0


def knn_regression(stacked: Space, n_train: int, reference: np.ndarray, y_train: np.ndarray,
                   ks: Sequence[int]) -> tuple[dict[int, np.ndarray], float, list[int]]:
    """Mean target of the k nearest reference rows, for every test row and k; ms per 1,000 queries.

    ``stacked`` holds the training rows then the test rows; ``reference`` are
    the training positions that may be neighbours. Returns the predictions by
    k, the search time and the ks clipped to the reference size.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [2.0], [0.9]])
    >>> pred, _, clipped = knn_regression(s, 3, np.arange(3), np.array([1.0, 2.0, 6.0]), [1, 2, 5])
    >>> {k: v.tolist() for k, v in pred.items()}, clipped
    ({1: [2.0], 2: [1.5], 5: [3.0]}, [5])
    """
    queries = np.arange(n_train, stacked.n)
    k_max = min(max(ks), len(reference))
    started = time.perf_counter()
    _, pos = kneighbors(stacked, k_max, queries=queries, reference=reference, exclude_self=False)
    ms = (time.perf_counter() - started) / max(len(queries), 1) * 1e6
    sums = np.cumsum(y_train[pos], axis=1)
    predictions = {k: sums[:, min(k, k_max) - 1] / min(k, k_max) for k in ks}
    return predictions, ms, [k for k in ks if k > k_max]


def table_fold_spaces(frame: pl.DataFrame, kinds: dict[str, str], settings: SpaceSettings,
                      engine: EngineSettings, ids: Sequence[object], bins: int = 10) -> FoldSpaces:
    """Fit the space on each fold's training rows of ``frame`` only, and embed the test rows with it.

    HVDM and learned weights read classes: they get the training targets'
    quantile bins (as text), computed on the training rows only.
    """

    def spaces(train: np.ndarray, test: np.ndarray, y_train: np.ndarray) -> tuple[Space, Space]:
        classes = quantile_bins(y_train, bins)[0].astype(str)
        fitted = fit_space(frame[train], kinds, settings, [ids[i] for i in train], engine,
                           labels=classes)
        return fitted.space, fitted.transform(frame[test], [ids[i] for i in test])

    return spaces


def stage_curation(stages: Sequence[tuple[MethodInfo, Mapping[str, Any]]], seed: int) -> Curation:
    """Run method functions in order on a fold's training rows, each on the rows still kept.

    Examples
    --------
    >>> from curate.methods.regression import REG_ENN
    >>> curate = stage_curation([(REG_ENN, {"k": 2})], seed=0)
    >>> s = Space.from_matrix([[0.0], [1.0], [2.0], [3.0], [4.0], [5.0]])
    >>> kept, removed, over = curate(s, np.array([10.0, 11, 12, 40, 13, 14]), np.arange(6))
    >>> kept.tolist(), [r.tolist() for r in removed], over
    ([0, 1, 2, 4, 5], [[3]], [])
    """

    def curate(space: Space, y: np.ndarray, train: np.ndarray
               ) -> tuple[np.ndarray, list[np.ndarray], list[str]]:
        active = np.arange(space.n)
        removed: list[np.ndarray] = []
        for info, params in stages:
            sel = info.func(space.subset(active), y[active],
                            removable=np.ones(len(active), dtype=bool), seed=seed, **dict(params))
            removed.append(active[sel.removed])
            active = active[sel.kept]
        return np.sort(active), removed, []

    return curate


def _check(plan: RegressionPlan, n: int) -> None:
    if plan.folds < 2 or plan.repeats < 1:
        raise UsageError(f"--folds {plan.folds} --repeats {plan.repeats}: need 2 or more folds "
                         "and 1 or more repeats", hint="use --folds 10 --repeats 1 (the defaults)")
    if plan.folds > n:
        raise UsageError(f"--folds {plan.folds} is more than the {n} rows",
                         hint=f"use --folds {max(2, min(10, n))} or fewer")
    if not plan.ks or min(plan.ks) < 1:
        raise UsageError(f"k values {list(plan.ks)} must be integers >= 1", hint="use --k 1,3,5")
    if not 0.0 <= plan.outliers < 1.0:
        raise UsageError(f"--inject-noise {plan.outliers} is not a share from 0 to below 1",
                         hint="give a share such as 0.05 (5% of training targets moved)")
    if plan.model is not None:  # a bad name fails before any fold
        estimator(plan.model, plan.model_params, plan.seed, regression=True)


def _fold(plan: RegressionPlan, targets: np.ndarray, spaces: FoldSpaces, curate: Curation,
          faults: np.ndarray | None, where: tuple[int, int, np.ndarray, np.ndarray]
          ) -> FoldOutcome:
    """Curate one fold's training part and score every model on its untouched test part."""
    repeat, number, train, test = where
    y_train, y_test, moved = targets[train], targets[test], None
    if plan.outliers > 0:
        y_train, moved = inject_outliers(y_train, plan.outliers, [plan.seed, repeat, number])
    space_train, space_test = spaces(train, test, y_train)
    kept, removed, over = curate(space_train, y_train, train)
    stacked = stack(space_train, space_test)
    scores: dict[Key, dict[str, float]] = {}
    clipped: set[Key] = set()
    lookup: dict[bool, float] = {}
    for curated, reference in ((False, np.arange(len(train))), (True, kept)):
        predicted, lookup[curated], short = knn_regression(stacked, len(train), reference,
                                                           y_train, plan.ks)
        for k, values in predicted.items():
            scores[(KNN, k, curated)] = regression_metrics(y_test, values)
        clipped |= {(KNN, k, curated) for k in short}
        if plan.model is not None:
            est = estimator(plan.model, plan.model_params, plan.seed, regression=True)
            est.fit(space_train.matrix[reference], y_train[reference])
            scores[(plan.model, None, curated)] = regression_metrics(
                y_test, est.predict(space_test.matrix))
    return FoldOutcome(len(train), len(test), len(kept), mean_baseline_rmse(y_train, y_test),
                       scores, clipped, lookup, removed, moved,
                       None if faults is None else faults[train], tuple(over))


def _outlier_kinds(fold: FoldOutcome) -> np.ndarray:
    """Fault kind of each training row under injected outliers: "outlier" or ""."""
    return np.where(fold.flipped_rows(), "outlier", "")


def _summary(plan: RegressionPlan, folds: list[FoldOutcome], names: Sequence[str],
             meant: Sequence[Sequence[str]], n: int, faults: np.ndarray | None) -> dict[str, Any]:
    ratio = float(np.mean([f.n_test for f in folds]) / np.mean([f.n_train for f in folds]))
    keys = [(KNN, k) for k in plan.ks] + ([(plan.model, None)] if plan.model else [])
    records = [regression_record(folds, (name, k, c), ratio)
               for name, k in keys for c in (False, True)]
    result: dict[str, Any] = {
        "task": "regression", "folds": plan.folds, "repeats": plan.repeats, "seed": plan.seed,
        "rows": n, "ks": list(plan.ks), "model": plan.model, "model_params": dict(plan.model_params),
        "test": TEST_NAME, "baseline_rmse": float(np.mean([f.baseline for f in folds])),
        "kept_share": float(np.mean([f.kept / f.n_train for f in folds])),
        "lookup": {"k": max(plan.ks),
                   "full_ms_per_1000": float(np.mean([f.lookup_ms[False] for f in folds])),
                   "curated_ms_per_1000": float(np.mean([f.lookup_ms[True] for f in folds]))},
        "best_k": stats.best_k(records, "rmse", lower_is_better=True), "results": records,
        "noise": None, "truth": None,
        "over_limit": {name: sum(name in f.over_limit for f in folds) for name in names
                       if any(name in f.over_limit for f in folds)},
    }
    if plan.outliers > 0:
        result["noise"] = {"kind": "outliers", "rate": plan.outliers,
                           "shift_sds": list(OUTLIER_SDS),
                           "moved": int(sum(int(f.flipped_rows().sum()) for f in folds)),
                           **detection_by_stage(folds, _outlier_kinds, names, meant)}
    if faults is not None:
        kinds, counts = np.unique(faults[faults != ""], return_counts=True)
        result["truth"] = {"faults": dict(zip(kinds.tolist(), counts.tolist(), strict=True)),
                           **detection_by_stage(folds, FoldOutcome.fault_kinds, names, meant),
                           "by_fault": recall_by_fault(folds)}
    return result


def cross_validate_regression(targets: np.ndarray, spaces: FoldSpaces, curate: Curation, *,
                              stage_names: Sequence[str], plan: RegressionPlan,
                              faults: np.ndarray | None = None,
                              catches: Sequence[Sequence[str]] | None = None,
                              progress: Callable[[str], None] | None = None) -> dict[str, Any]:
    """Measure, without leakage, what curation does to regression errors.

    Parameters
    ----------
    targets : array of float
        One target per row (checked numeric, finite and not constant by the caller).
    spaces, curate : callables
        How a fold becomes spaces (:func:`table_fold_spaces`) and how its
        training rows are curated (:func:`stage_curation`).
    stage_names : sequence of str
        The stages, in the order ``curate`` reports their removals.
    plan : RegressionPlan
    faults : array of str, optional
        Known fault kind of each row ("" for none), scored like the outliers.
    catches : sequence of sequences of str, optional
        The fault kinds each stage's method is meant to catch
        (``MethodInfo.catches``); a stage is scored against those. Default: none.

    Returns
    -------
    dict with ``task`` ("regression"), ``baseline_rmse``, ``results`` (one
    record per model, k and curated or not, carrying ``rmse``, ``mae``, ``r2``,
    ``fold_rmse`` and for curated records ``rmse_difference`` and the test),
    ``best_k``, ``lookup``, ``noise`` and ``truth``, JSON-safe.

    Examples
    --------
    >>> x = np.linspace(0, 1, 60).reshape(-1, 1)
    >>> y = 10 * x[:, 0] + np.sin(40 * x[:, 0])
    >>> def spaces(train, test, _):
    ...     return Space.from_matrix(x[train]), Space.from_matrix(x[test])
    >>> out = cross_validate_regression(y, spaces, stage_curation([], 0), stage_names=[],
    ...                                 plan=RegressionPlan(folds=3, ks=(1, 60)))
    >>> out["best_k"], round(out["results"][2]["rmse"] / out["baseline_rmse"], 6)
    ({'uncurated': 1, 'curated': 1}, 1.0)
    """
    y = np.asarray(targets, dtype=np.float64)
    plan = RegressionPlan(plan.folds, plan.repeats, tuple(sorted(set(plan.ks))), plan.model,
                          dict(plan.model_params), plan.outliers, plan.seed)
    _check(plan, len(y))
    say = progress or (lambda _message: None)
    started = time.perf_counter()
    outcomes: list[FoldOutcome] = []
    for repeat in range(plan.repeats):
        for number, (train, test) in enumerate(regression_folds(y, plan.folds,
                                                                plan.seed + repeat)):
            say(f"repeat {repeat + 1}/{plan.repeats}, fold {number + 1}/{plan.folds}: "
                f"{len(train)} training rows, {len(test)} test rows")
            outcomes.append(_fold(plan, y, spaces, curate, faults, (repeat, number, train, test)))
    meant = [tuple(c) for c in catches] if catches is not None else [()] * len(stage_names)
    result = _summary(plan, outcomes, stage_names, meant, len(y), faults)
    result["seconds"] = round(time.perf_counter() - started, 3)
    return stats.json_safe(result)


def evaluate_regression(prep: Prepared, *, folds: int = 10, repeats: int = 1,
                        ks: Sequence[int] = K_GRID, model: str | None = None,
                        model_params: Mapping[str, Any] | None = None, inject_noise: float = 0.0,
                        faults: np.ndarray | None = None, truth: str | None = None,
                        seed: int = 0, progress: Callable[[str], None] | None = None
                        ) -> dict[str, Any]:
    """Evaluate a prepared pipeline whose task is regression (see :func:`curate.evaluate`).

    ``inject_noise`` is the share of each fold's training targets moved as
    outliers; ``faults`` the known fault kind of each valid row, read from the
    ``truth`` file by the caller.
    """
    spec = prep.spec
    ids = prep.ids.gather(prep.valid_positions).to_list()
    spaces = table_fold_spaces(prep.checked, prep.kinds, spec.space, spec.run.engine, ids)

    def curate(space: Space, y: np.ndarray, train: np.ndarray
               ) -> tuple[np.ndarray, list[np.ndarray], list[str]]:
        return curate_fold(prep, space, y, [ids[i] for i in train],
                           np.flatnonzero(np.isin(train, prep.protected)))

    plan = RegressionPlan(folds, repeats, tuple(ks), model, dict(model_params or {}),
                          inject_noise, seed)
    result = cross_validate_regression(prep.space_labels, spaces, curate,
                                       stage_names=[s.name for s in spec.stages], plan=plan,
                                       faults=faults, progress=progress,
                                       catches=[method_for(s.method, "regression").catches
                                                for s in spec.stages])
    if result["truth"] is not None:
        result["truth"]["file"] = truth
    return {"pipeline": spec.source, "input": str(spec.input.path),
            "rows_quarantined": int((~prep.valid).sum()), "task_reason": prep.task.reason,
            "unit": spec.input.unit, **result}
