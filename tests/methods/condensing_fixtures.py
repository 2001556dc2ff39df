"""Data and reference checks shared by the condensing tests (nothing loaded at import time).

Every data set ships inside scikit-learn (no download) and is range-normalised
with scikit-learn's MinMaxScaler, as curate's default space is.
"""

from __future__ import annotations

import numpy as np
import open_data
from sklearn.neighbors import KNeighborsClassifier
from sklearn.preprocessing import MinMaxScaler

DATASETS = ("wine", "breast_cancer", "digits")


def scaled(name: str, rows: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Return (X in [0, 1], y) of a bundled data set, the first ``rows`` rows if given.

    Digits is cut to its first 500 rows and nudged by seeded noise far below
    one pixel step: its integer pixels make many distances tie exactly, and
    which of two equally near rows scikit-learn returns is not promised
    (common practice, no source). None of these sets has two rows with equal
    features (checked with numpy.unique), so none has conflicting copies.
    """
    X, y = open_data.load(name)
    if name == "digits":
        X, y = X[:500], y[:500]
        X = X + np.random.default_rng(5).uniform(0.0, 1e-6, size=X.shape)
    if rows is not None:
        X, y = X[:rows], y[:rows]
    return MinMaxScaler().fit_transform(X), y.copy()


def misclassified_by_kept(X: np.ndarray, y: np.ndarray, kept: np.ndarray,
                          metric: str = "euclidean") -> np.ndarray:
    """Rows that scikit-learn's 1-NN, fitted on the kept rows only, labels wrongly.

    Hart 1968's consistency: a condensed set is consistent when this is empty.
    """
    knn = KNeighborsClassifier(n_neighbors=1, metric=metric).fit(X[kept], y[kept])
    return np.flatnonzero(knn.predict(X) != y)
