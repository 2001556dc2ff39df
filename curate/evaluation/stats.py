"""The statistics of an evaluation: paired tests across folds, baselines, label noise, detection.

Everything here is a pure function of arrays; randomness comes only from an
explicit seed.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import stats as sps

__all__ = ["KNN", "METRICS", "FoldOutcome", "best_k", "corrected_resampled_ttest", "flip_labels",
           "fold_record", "json_safe", "majority_accuracy", "mean_std"]


def corrected_resampled_ttest(a: Sequence[float] | np.ndarray, b: Sequence[float] | np.ndarray,
                              test_train_ratio: float) -> tuple[float, float]:
    """Paired t-test across resampled folds with the Nadeau and Bengio (2003) variance correction.

    The folds of cross-validation share training rows, so their scores are
    correlated and the plain paired t-test is far too eager. Nadeau and Bengio
    (Machine Learning 52, 239-281) replace the variance of the mean difference
    ``s^2 / J`` by ``(1/J + n_test/n_train) s^2``, with ``J`` the number of
    folds over all repeats and ``s^2`` the sample variance (ddof 1) of the
    per-fold differences; the statistic has ``J - 1`` degrees of freedom.
    ``test_train_ratio = 0`` gives the plain paired t-test.

    Parameters
    ----------
    a, b : sequences of float
        Paired per-fold scores (the same folds, in the same order).
    test_train_ratio : float
        ``n_test / n_train`` of one fold (10-fold: 1/9).

    Returns
    -------
    (t, p) : the statistic of ``mean(a - b)`` and its two-sided p-value. When
        every difference is equal the variance is zero: ``(0, 1)`` if they are
        all zero, else ``(+-inf, 0)``.

    Examples
    --------
    >>> t, p = corrected_resampled_ttest([0.9, 0.8, 0.85], [0.8, 0.8, 0.8], 0.5)
    >>> round(t, 3), round(p, 3)
    (1.095, 0.388)
    """
    d = np.asarray(a, dtype=np.float64) - np.asarray(b, dtype=np.float64)
    if len(d) < 2:
        raise ValueError("a paired test needs at least two folds")
    mean, var = float(d.mean()), float(d.var(ddof=1))
    if var == 0.0:
        return (0.0, 1.0) if mean == 0.0 else (float(np.sign(mean) * np.inf), 0.0)
    t = mean / np.sqrt((1.0 / len(d) + test_train_ratio) * var)
    return float(t), float(2.0 * sps.t.sf(abs(t), df=len(d) - 1))


def majority_accuracy(train_labels: np.ndarray, test_labels: np.ndarray) -> float:
    """Accuracy of always predicting the training part's most frequent class.

    Ties go to the smallest label, as numpy's sorted ``unique`` lists them.

    Examples
    --------
    >>> majority_accuracy(np.array(["a", "b", "b"]), np.array(["b", "a", "b", "b"]))
    0.75
    """
    values, counts = np.unique(np.asarray(train_labels), return_counts=True)
    return float(np.mean(np.asarray(test_labels) == values[np.argmax(counts)]))


def flip_labels(labels: np.ndarray, rate: float, seed: int | Sequence[int],
                towards: Any = None) -> tuple[np.ndarray, np.ndarray]:
    """Give a seeded share of rows another class; return the new labels and the flipped mask.

    ``round(rate * n)`` rows are drawn without replacement. Each gets a class
    drawn uniformly from the other classes present, or ``towards`` when given
    (compared as text; rows already of that class are never drawn, so fewer
    rows than asked may flip when it is large).

    Examples
    --------
    >>> new, flipped = flip_labels(np.array(["a"] * 6 + ["b"] * 4), 0.3, seed=1)
    >>> int(flipped.sum()), bool(np.all(new[flipped] != np.array(["a"] * 6 + ["b"] * 4)[flipped]))
    (3, True)
    """
    labels = np.asarray(labels)
    if not 0.0 <= rate <= 1.0:
        raise ValueError(f"noise rate must be from 0 to 1, got {rate}")
    rng = np.random.default_rng(seed)
    classes = np.unique(labels)
    if len(classes) < 2:
        raise ValueError("flipping labels needs two or more classes")
    text = labels.astype(str)
    eligible = np.arange(len(labels))
    target = None
    if towards is not None:
        match = np.flatnonzero(classes.astype(str) == str(towards))
        if len(match) == 0:
            raise ValueError(f"class {towards!r} does not occur")
        target = classes[match[0]]
        eligible = np.flatnonzero(text != str(towards))
    count = min(int(round(rate * len(labels))), len(eligible))
    chosen = np.sort(rng.choice(eligible, size=count, replace=False))
    new = labels.copy()
    if target is not None:
        new[chosen] = target
    else:
        code = np.searchsorted(classes, labels[chosen])
        # Draw among the other classes: shift by 1..C-1 around the class ring.
        new[chosen] = classes[(code + rng.integers(1, len(classes), size=count)) % len(classes)]
    flipped = np.zeros(len(labels), dtype=bool)
    flipped[chosen] = True
    return new, flipped


def mean_std(values: Sequence[float] | np.ndarray) -> tuple[float, float]:
    """Mean and sample standard deviation (ddof 1; 0 for a single value).

    Examples
    --------
    >>> mean_std([1.0, 2.0, 3.0])
    (2.0, 1.0)
    """
    v = np.asarray(values, dtype=np.float64)
    return float(v.mean()), float(v.std(ddof=1)) if len(v) > 1 else 0.0


KNN = "knn"
METRICS = ("accuracy", "balanced_accuracy", "macro_f1")
Key = tuple[str, int | None, bool]


@dataclass
class FoldOutcome:
    """What one fold measured.

    ``scores`` maps (model, k or None, curated) to :data:`METRICS`; ``clipped``
    holds the keys whose k exceeded the training rows; ``lookup_ms`` the time
    per 1,000 neighbour queries against the full (False) and curated (True)
    training rows; ``removed`` each stage's removed training positions;
    ``flipped`` the mask of flipped labels and ``faults`` the known fault kind
    ("" for none) of each training row, when asked for; ``over_limit`` the
    stages that removed more of a class than their ``max_removed_share``.

    Examples
    --------
    >>> f = FoldOutcome(4, 2, 2, 0.5, {}, set(), {}, [np.array([0])], None, None)
    >>> f.flipped_rows().tolist(), f.removed_rows().tolist()
    ([False, False, False, False], [True, False, False, False])
    """

    n_train: int
    n_test: int
    kept: int
    baseline: float
    scores: dict[Key, dict[str, float]]
    clipped: set[Key]
    lookup_ms: dict[bool, float]
    removed: list[np.ndarray]
    flipped: np.ndarray | None
    faults: np.ndarray | None
    over_limit: tuple[str, ...] = ()

    def _mask(self, rows: np.ndarray) -> np.ndarray:
        mask = np.zeros(self.n_train, dtype=bool)
        mask[np.asarray(rows, dtype=np.int64)] = True
        return mask

    def flipped_rows(self) -> np.ndarray:
        """Mask of training rows whose label was flipped (all False without noise)."""
        return self._mask(np.zeros(0)) if self.flipped is None else self.flipped

    def faulty_rows(self) -> np.ndarray:
        """Mask of training rows with a known fault (all False without a truth table)."""
        return self._mask(np.zeros(0)) if self.faults is None else self.faults != ""

    def flip_kinds(self) -> np.ndarray:
        """Fault kind of each training row under injected noise: "label-flip" or ""."""
        return np.where(self.flipped_rows(), "label-flip", "")

    def fault_kinds(self) -> np.ndarray:
        """Known fault kind of each training row ("" for none, or without a truth table)."""
        return np.full(self.n_train, "") if self.faults is None else self.faults

    def removed_rows(self, stage: int | None = None) -> np.ndarray:
        """Mask of training rows removed by one stage (by number), or by any stage."""
        if stage is not None:
            return self._mask(self.removed[stage])
        return self._mask(np.concatenate(self.removed) if self.removed else np.zeros(0))


def fold_record(folds: Sequence[FoldOutcome], key: Key, ratio: float) -> dict[str, Any]:
    """One results record: means over folds and, for a curated key, the paired test.

    ``ratio`` is ``n_test / n_train`` for :func:`corrected_resampled_ttest`.

    Examples
    --------
    >>> def fold(plain, cured):
    ...     return FoldOutcome(9, 1, 6, 0.5, {("m", None, False): {m: plain for m in METRICS},
    ...                                       ("m", None, True): {m: cured for m in METRICS}},
    ...                        set(), {}, [], None, None)
    >>> r = fold_record([fold(0.8, 0.9), fold(0.7, 0.7)], ("m", None, True), 1 / 9)
    >>> round(r["accuracy"], 3), round(r["kept_share"], 3), round(r["accuracy_difference"], 3)
    (0.8, 0.667, 0.05)
    """
    name, k, curated = key
    per = [f.scores[key] for f in folds]
    record: dict[str, Any] = {"model": name, "k": k, "curated": curated}
    record.update({m: float(np.mean([p[m] for p in per])) for m in METRICS})
    record["accuracy_std"] = mean_std([p["accuracy"] for p in per])[1]
    record["kept_share"] = float(np.mean([f.kept / f.n_train for f in folds])) if curated else 1.0
    if name == KNN:
        record["lookup_ms_per_1000"] = float(np.mean([f.lookup_ms[curated] for f in folds]))
        record["k_clipped_folds"] = sum(key in f.clipped for f in folds)
    record["fold_accuracy"] = [p["accuracy"] for p in per]
    if curated:
        plain = [f.scores[(name, k, False)]["accuracy"] for f in folds]
        t, p = corrected_resampled_ttest(record["fold_accuracy"], plain, ratio)
        record.update(accuracy_difference=record["accuracy"] - float(np.mean(plain)),
                      t_statistic=t, p_value=p)
    return record


def best_k(records: Sequence[dict[str, Any]]) -> dict[str, int]:
    """The kNN k of highest mean accuracy, without and with curation (ties: smaller k).

    Examples
    --------
    >>> best_k([{"model": KNN, "k": 1, "curated": False, "accuracy": 0.8},
    ...         {"model": KNN, "k": 3, "curated": False, "accuracy": 0.8}])
    {'uncurated': 1}
    """
    best = {}
    for curated, label in ((False, "uncurated"), (True, "curated")):
        rows = [r for r in records if r["model"] == KNN and r["curated"] == curated]
        if rows:
            best[label] = max(rows, key=lambda r: (r["accuracy"], -r["k"]))["k"]
    return best


def json_safe(value: Any) -> Any:
    """A JSON-safe copy: numpy scalars become Python numbers, NaN and infinities None.

    Examples
    --------
    >>> json_safe({"p": float("nan"), "n": np.int64(3), "t": (np.float64(1.5),)})
    {'p': None, 'n': 3, 't': [1.5]}
    """
    if isinstance(value, dict):
        return {str(k): json_safe(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [json_safe(v) for v in value]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not np.isfinite(value):
        return None
    return value
