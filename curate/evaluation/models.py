"""The models an evaluation scores: curate's own k-nearest-neighbour vote, and any
scikit-learn classifier named by import path, fitted on the embedded matrix."""

from __future__ import annotations

import importlib
import time
from collections.abc import Mapping
from dataclasses import replace
from typing import Any

import numpy as np

from curate.errors import UsageError
from curate.neighbours.search import kneighbors
from curate.space.points import Space

__all__ = ["estimator", "knn_votes", "metrics", "stack"]


def estimator(path: str, params: Mapping[str, Any], seed: int) -> Any:
    """Build the named classifier; seed it when it takes a random_state and none was given."""
    module, _, name = path.rpartition(".")
    try:
        cls = getattr(importlib.import_module(module), name) if module else None
    except (ImportError, AttributeError):
        cls = None
    if cls is None or not (hasattr(cls, "fit") and hasattr(cls, "predict")):
        raise UsageError(f"--model {path!r} is not an importable classifier with fit and predict",
                         hint="give a full import path such as "
                              "sklearn.ensemble.RandomForestClassifier")
    try:
        estimator = cls(**params)
    except TypeError as err:
        raise UsageError(f"--model {path}: bad parameters {dict(params)}: {err}",
                         hint="use the parameter names of the class's constructor") from None
    if hasattr(estimator, "get_params") and "random_state" in estimator.get_params() \
            and "random_state" not in params:
        estimator.set_params(random_state=seed)
    return estimator


def stack(a: Space, b: Space) -> Space:
    """One space holding ``a``'s rows then ``b``'s, for searches from test rows into training rows."""
    gaps = None
    if a.gaps is not None or b.gaps is not None:
        width = len(a.attributes)
        gaps = np.vstack([np.zeros((x.n, width), dtype=bool) if x.gaps is None else x.gaps
                          for x in (a, b)])
    metric = next((x.metric for x in (a, b) if x.metric.endswith("-missing")), a.metric)
    return replace(a, matrix=np.ascontiguousarray(np.vstack([a.matrix, b.matrix])),
                   identity=None, gaps=gaps, metric=metric)


def metrics(truth: np.ndarray, predicted: np.ndarray) -> dict[str, float]:
    from sklearn.metrics import accuracy_score, balanced_accuracy_score, f1_score

    return {"accuracy": float(accuracy_score(truth, predicted)),
            "balanced_accuracy": float(balanced_accuracy_score(truth, predicted)),
            "macro_f1": float(f1_score(truth, predicted, average="macro", zero_division=0))}


def knn_votes(ks: tuple[int, ...], stacked: Space, n_train: int, reference: np.ndarray,
         train_codes: np.ndarray, n_classes: int) -> tuple[dict[int, np.ndarray], float, list[int]]:
    """Votes of the k nearest reference rows for every test row and k; ms per 1,000 queries.

    A k above the reference rows uses all of them (reported as clipped).
    """
    queries = np.arange(n_train, stacked.n)
    k_max = min(max(ks), len(reference))
    started = time.perf_counter()
    _, pos = kneighbors(stacked, k_max, queries=queries, reference=reference, exclude_self=False)
    ms = (time.perf_counter() - started) / len(queries) * 1e6
    codes = train_codes[pos]
    votes: dict[int, np.ndarray] = {}
    for k in ks:
        counts = np.stack([(codes[:, :min(k, k_max)] == c).sum(axis=1) for c in range(n_classes)],
                          axis=1)
        votes[k] = counts.argmax(axis=1)  # first maximum: ties go to the smallest class
    return votes, ms, [k for k in ks if k > k_max]
