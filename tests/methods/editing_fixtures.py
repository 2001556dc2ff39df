"""Data and outside-library helpers shared by the editing and cleaning tests.

Nothing is loaded at import time. Every data set is one that scikit-learn
ships inside the package (no download), range-normalised with scikit-learn's
MinMaxScaler as curate's default space does.
"""

from __future__ import annotations

import numpy as np
import open_data
from sklearn.neighbors import NearestNeighbors
from sklearn.preprocessing import MinMaxScaler

from curate.space import Space

# Our vote names -> imbalanced-learn's kind_sel (its ENN, RENN and All-kNN take the same).
KINDS = {"majority": "mode", "unanimous": "all"}


def dataset(name: str, *, flip: float = 0.0, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """Return (X range-normalised, y), with a seeded share of labels flipped.

    Digits are subsampled to 600 rows and jittered by 1e-6 of a pixel step
    before scaling: its pixels are integers 0..16, so without jitter many
    distances tie exactly, and which of two equally near rows a reference
    library returns is not promised (common practice, no source).
    """
    X, y = open_data.load(name)
    if name == "digits":
        rng = np.random.default_rng(seed + 1000)
        keep = np.sort(rng.choice(len(y), 600, replace=False))
        X = X[keep] + rng.uniform(0.0, 1e-6, size=X[keep].shape)
        y = y[keep]
    X = MinMaxScaler().fit_transform(X)
    return X, flip_labels(y, flip, seed) if flip else y.copy()


def flip_labels(y: np.ndarray, share: float, seed: int) -> np.ndarray:
    """Give a seeded ``share`` of rows a different label, drawn uniformly from the others."""
    rng = np.random.default_rng(seed)
    out = y.copy()
    classes = np.unique(y)
    for i in rng.choice(len(y), int(round(share * len(y))), replace=False):
        out[i] = rng.choice(classes[classes != y[i]])
    return out


def space(X: np.ndarray) -> Space:
    """curate's space over an already scaled matrix."""
    return Space.from_matrix(X)


def everyone(n: int) -> np.ndarray:
    """A removable mask that lets every row go."""
    return np.ones(n, dtype=bool)


def neighbour_labels(X: np.ndarray, y: np.ndarray, k: int) -> np.ndarray:
    """Labels of each row's k nearest other rows, by scikit-learn's NearestNeighbors."""
    idx = NearestNeighbors(n_neighbors=k).fit(X).kneighbors(None, return_distance=False)
    return y[idx]


def own_label_ties(X: np.ndarray, y: np.ndarray, k: int) -> np.ndarray:
    """Rows whose own label ties with another label for the most of k neighbour votes.

    There the majority rule (Wilson 1972) gives no answer; curate keeps the
    row, imbalanced-learn's ``mode`` picks the smallest tied label.
    """
    votes = neighbour_labels(X, y, k)
    classes = np.unique(y)
    counts = (votes[:, :, None] == classes[None, None, :]).sum(axis=1)
    own = counts[np.arange(len(y)), np.searchsorted(classes, y)]
    top = counts.max(axis=1)
    return (own == top) & ((counts == top[:, None]).sum(axis=1) > 1)


def removed_by(sampler, X: np.ndarray, y: np.ndarray) -> set[int]:
    """Positions an imbalanced-learn sampler drops (its ``sample_indices_`` are those it keeps)."""
    sampler.fit_resample(X, y)
    return set(range(len(y))) - {int(i) for i in sampler.sample_indices_}


def drop_rows(X: np.ndarray, y: np.ndarray, rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The data without ``rows``."""
    keep = np.setdiff1d(np.arange(len(y)), rows)
    return X[keep], y[keep]
