"""The models an evaluation scores: curate's own k-nearest-neighbour vote, and any
scikit-learn classifier named by import path, fitted on the embedded matrix."""

from __future__ import annotations

import importlib
import time
import warnings
from collections.abc import Mapping
from dataclasses import replace
from typing import Any

import numpy as np

from curate.errors import UsageError
from curate.neighbours.search import kneighbors
from curate.space.points import Space

__all__ = ["estimator", "fit_predict", "knn_votes", "metrics", "stack"]


def _refused(cls: Any, params: Mapping[str, Any]) -> tuple[str, Exception] | None:
    """The first given parameter the class refuses on its own, and its error (scikit-learn's
    declared parameter constraints; classes without them are trusted until fit)."""
    for name, value in params.items():
        try:
            single = cls(**{name: value})
            check = getattr(single, "_validate_params", None)
            if check is not None:
                check()
        except Exception as err:  # any error here is the user's parameter, reported as such
            return name, err
    return None


def _bad_param(path: str, params: Mapping[str, Any], name: str, err: Exception) -> UsageError:
    unknown = isinstance(err, TypeError) and "keyword" in str(err)
    hint = (f"{name} is not a parameter of {path}: use the names its constructor takes"
            if unknown else f"give --model-param {name}=VALUE a value the class accepts (its "
                            "documentation lists them), or leave it out for the default")
    return UsageError(f"--model {path}: parameter {name}={params[name]!r} was refused: {err}",
                      hint=hint)


def estimator(path: str, params: Mapping[str, Any], seed: int) -> Any:
    """Build the named classifier; seed it when it takes a random_state and none was given.

    A parameter the class refuses is a :class:`~curate.errors.UsageError` naming
    the model and the parameter, before any fold runs.

    Examples
    --------
    >>> try:
    ...     estimator("sklearn.svm.SVC", {"C": "abc"}, 0)
    ... except UsageError as err:
    ...     print(err.message[:59])
    --model sklearn.svm.SVC: parameter C='abc' was refused: The
    """
    module, _, name = path.rpartition(".")
    try:
        cls = getattr(importlib.import_module(module), name) if module else None
    except (ImportError, AttributeError):
        cls = None
    if cls is None or not (hasattr(cls, "fit") and hasattr(cls, "predict")):
        raise UsageError(f"--model {path!r} is not an importable classifier with fit and predict",
                         hint="give a full import path such as "
                              "sklearn.ensemble.RandomForestClassifier")
    refused = _refused(cls, params)
    if refused is not None:
        raise _bad_param(path, params, *refused) from None
    try:
        estimator = cls(**params)
    except Exception as err:  # the user's class and parameters: report, do not crash
        raise UsageError(f"--model {path} could not be built with parameters {dict(params)}: "
                         f"{err}", hint="use the parameter names and values of the class's "
                                        "constructor") from None
    if hasattr(estimator, "get_params") and "random_state" in estimator.get_params() \
            and "random_state" not in params:
        estimator.set_params(random_state=seed)
    return estimator


def fit_predict(path: str, params: Mapping[str, Any], seed: int, x_train: np.ndarray,
                y_train: np.ndarray, x_test: np.ndarray) -> np.ndarray:
    """Fit the named classifier on one fold's training rows and predict its test rows.

    Whatever the user's class raises becomes a :class:`~curate.errors.UsageError`
    naming the model and its parameters (a bug of curate's own is not caught
    here: only the class's ``fit`` and ``predict`` run inside).
    """
    model = estimator(path, params, seed)
    try:
        model.fit(x_train, y_train)
        return np.asarray(model.predict(x_test))
    except Exception as err:  # raised by the user-named class: a usage problem, not a bug
        given = ", ".join(f"{k}={v!r}" for k, v in params.items()) or "none"
        raise UsageError(f"--model {path} (parameters: {given}) failed on a training fold: "
                         f"{type(err).__name__}: {err}",
                         hint="check the model's parameters; it is given the embedded feature "
                              "matrix (numbers only) and the labels") from None


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
    """Accuracy, balanced accuracy and macro F1 of one test fold.

    A test fold may lack a small class (the evaluation's ``warnings`` say
    which); scikit-learn's balanced accuracy then averages over the classes
    present, and its warning about it is left out here.
    """
    from sklearn.metrics import accuracy_score, balanced_accuracy_score, f1_score

    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message="y_pred contains classes not in y_true")
        balanced = float(balanced_accuracy_score(truth, predicted))
    return {"accuracy": float(accuracy_score(truth, predicted)), "balanced_accuracy": balanced,
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
