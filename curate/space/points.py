"""Rows as points: the matrix a space is built into, and the exact distance between rows."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from curate.settings import EngineSettings
from curate.space.distance import masked_distances, pairwise

__all__ = ["Space"]


@dataclass(frozen=True)
class Space:
    """Rows as points: ``matrix`` (n x d, float64) and the ``metric`` between them.

    ``columns`` names the embedded dimensions (``column``, ``column=value`` or,
    for VDM, ``column|class``). ``attributes`` names the input columns,
    ``groups[j]`` the attribute of dimension ``j``, ``gaps`` (or None) the
    ``(n, attributes)`` mask of missing values kept under ``missing = "far"``,
    and ``weights`` the weight applied to each attribute (set or learned).

    Examples
    --------
    >>> s = Space.from_matrix([[0.0, 0.0], [3.0, 4.0]])
    >>> s.distances([0], [1]).tolist()
    [[5.0]]
    >>> s.subset([1]).n
    1
    """

    matrix: np.ndarray
    metric: str = "euclidean"
    columns: tuple[str, ...] = ()
    engine: EngineSettings = EngineSettings()
    identity: np.ndarray | None = None
    attributes: tuple[str, ...] = ()
    groups: np.ndarray | None = None
    gaps: np.ndarray | None = None
    weights: dict[str, float] = field(default_factory=dict)

    def identity_codes(self) -> np.ndarray:
        """One integer per row, equal exactly when the rows' raw feature values are equal.

        Built from the input values when the space came from a table (so that
        scaling cannot merge two close values), else from the matrix rows.
        """
        if self.identity is not None:
            return self.identity
        _, codes = np.unique(self.matrix, axis=0, return_inverse=True)
        return np.asarray(codes, dtype=np.int64).reshape(-1)

    @classmethod
    def from_matrix(cls, matrix: Sequence[Sequence[float]] | np.ndarray,
                    metric: str = "euclidean", engine: EngineSettings | None = None) -> Space:
        """Wrap a ready numeric matrix (already scaled) as a space."""
        m = np.ascontiguousarray(np.asarray(matrix, dtype=np.float64))
        if m.ndim != 2:
            raise ValueError("a space needs a two-dimensional matrix")
        cols = tuple(f"x{j}" for j in range(m.shape[1]))
        return cls(m, metric, cols, engine or EngineSettings())

    @property
    def n(self) -> int:
        """Number of rows."""
        return int(self.matrix.shape[0])

    def subset(self, positions: Sequence[int] | np.ndarray) -> Space:
        """Return the space of the given rows, in the given order."""
        pos = np.asarray(positions, dtype=np.int64)
        ident = None if self.identity is None else self.identity[pos]
        gaps = None if self.gaps is None else self.gaps[pos]
        metric = self.metric
        if gaps is not None and not gaps.any():
            # No gap left among these rows: the fast Lp engines can serve them again.
            gaps, metric = None, "manhattan" if metric.startswith("manhattan") else "euclidean"
        return replace(self, matrix=np.ascontiguousarray(self.matrix[pos]), identity=ident,
                       gaps=gaps, metric=metric)

    def distances(self, a: Sequence[int] | np.ndarray, b: Sequence[int] | np.ndarray) -> np.ndarray:
        """Exact distances between rows ``a`` and rows ``b`` (positions)."""
        a, b = np.asarray(a, dtype=np.int64), np.asarray(b, dtype=np.int64)
        if self.gaps is None or self.groups is None:
            return pairwise(self.matrix[a], self.matrix[b], self.metric)
        cost = np.array([self.weights.get(name, 1.0) for name in self.attributes])
        return masked_distances(self.matrix, self.groups, self.gaps, cost, a, b,
                                manhattan=self.metric.startswith("manhattan"))
