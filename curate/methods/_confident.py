"""Per-class thresholds on out-of-fold probabilities (Northcutt, Jiang and Chuang 2021).

Pure arithmetic on a probability matrix, apart from the stage that uses it
(:func:`curate.methods.noise.class_thresholds`), so that it can be checked
on small examples worked by hand.
"""

from __future__ import annotations

import numpy as np

__all__ = ["confident_joint", "threshold_flags"]


def confident_joint(proba: np.ndarray, codes: np.ndarray, n_classes: int
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per-class thresholds, the confident joint and its calibration (Northcutt et al. 2021).

    ``t[j]`` is the mean probability of class ``j`` over rows labelled ``j``
    (its mean self-confidence). A row labelled ``i`` counts in ``C[i, j]``
    where ``j`` is its most probable class among those whose probability
    reaches their threshold (rows with none are not counted). The calibrated
    joint scales each row of ``C`` to the number of rows labelled ``i``.
    Returns ``(t, C, calibrated)``.

    Examples
    --------
    >>> p = np.array([[0.9, 0.1], [0.6, 0.4], [0.3, 0.7], [0.2, 0.8]])
    >>> t, joint, cal = confident_joint(p, np.array([0, 0, 0, 1]), 2)
    >>> t.round(2).tolist(), joint.tolist(), cal.round(2).tolist()
    ([0.6, 0.8], [[2, 0], [0, 1]], [[3.0, 0.0], [0.0, 1.0]])
    """
    t = np.array([proba[codes == j, j].mean() if np.any(codes == j) else np.inf
                  for j in range(n_classes)])
    above = proba >= t[None, :]
    best = np.where(above, proba, -np.inf).argmax(axis=1)
    counted = above.any(axis=1)
    joint = np.zeros((n_classes, n_classes), dtype=np.int64)
    np.add.at(joint, (codes[counted], best[counted]), 1)
    sizes = np.bincount(codes, minlength=n_classes).astype(np.float64)
    totals = joint.sum(axis=1, keepdims=True).astype(np.float64)
    calibrated = np.divide(joint * sizes[:, None], totals, out=np.zeros(joint.shape),
                           where=totals > 0)
    return t, joint, calibrated


def threshold_flags(proba: np.ndarray, codes: np.ndarray, removable: np.ndarray
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Which rows per-class thresholds flag: (positions, suggested classes, candidate mask,
    estimated mislabelled per class).

    A row is a *candidate* when another class's probability reaches that
    class's threshold and its own does not (thresholds: :func:`confident_joint`).
    In each class ``i`` the rows flagged number the estimated count of its
    mislabelled rows, the off-diagonal sum of row ``i`` of the calibrated
    confident joint (rounded): candidates first, then, if the estimate is
    larger, the class's other rows, each with the lowest probability of its own
    label first ("prune by class", Northcutt, Jiang and Chuang 2021), among
    removable rows. A candidate's suggested class is its most probable class
    at or above its threshold; another row's, its most probable other class.

    Examples
    --------
    Class 2 has four rows; one (row 3) reaches class 0's threshold, and
    two (rows 1, 2) reach no threshold, so the calibrated joint estimates two
    mislabelled rows there: row 3, then row 2, whose own probability is lower.

    >>> p = np.array([[0.1, 0.1, 0.8], [0.3, 0.3, 0.4], [0.35, 0.3, 0.35], [0.6, 0.1, 0.3],
    ...               [0.8, 0.1, 0.1], [0.3, 0.6, 0.1], [0.1, 0.8, 0.1], [0.2, 0.7, 0.1]])
    >>> pos, to, cand, est = threshold_flags(p, np.array([2, 2, 2, 2, 0, 0, 1, 1]),
    ...                                      np.ones(8, bool))
    >>> pos.tolist(), to.tolist(), cand.nonzero()[0].tolist(), est.tolist()
    ([3, 2], [0, 0], [3], [0, 0, 2])
    """
    n_classes = proba.shape[1]
    t, _, calibrated = confident_joint(proba, codes, n_classes)
    rows = np.arange(len(codes))
    above = proba >= t[None, :]
    other_above = above.copy()
    other_above[rows, codes] = False
    candidate = other_above.any(axis=1) & ~above[rows, codes]
    estimated = np.rint(calibrated.sum(axis=1) - np.diag(calibrated)).astype(np.int64)
    own = proba[rows, codes]
    picked: list[np.ndarray] = []
    for c in range(n_classes):
        pool = np.flatnonzero((codes == c) & removable)
        pool = pool[np.lexsort((pool, own[pool], ~candidate[pool]))]
        picked.append(pool[:estimated[c]])
    positions = np.concatenate(picked) if picked else np.zeros(0, dtype=np.int64)
    others = np.where(np.eye(n_classes, dtype=bool)[codes[positions]], -np.inf,
                      proba[positions])
    reach = np.where(other_above[positions], proba[positions], -np.inf)
    suggested = np.where(candidate[positions], reach.argmax(axis=1), others.argmax(axis=1))
    return positions.astype(np.int64), suggested.astype(np.int64), candidate, estimated
