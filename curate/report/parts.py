"""Seeded samples of a run's rows for the report's plots, and their removal reasons.

The keyed cells, tables and sections every section is built from live in
:mod:`curate.report.cells`; the evaluation's tables in :mod:`curate.report.evaluation`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
import polars as pl

if TYPE_CHECKING:
    from curate.pipeline.records import RunResult

__all__ = ["MAX_POINTS", "MAX_QUERIES", "principal_components", "reasons_of_valid", "sample"]

# Points in the projection and queries in the distance histogram; a sample beyond that.
MAX_POINTS = 4000
MAX_QUERIES = 2000


def reasons_of_valid(result: RunResult, pick: np.ndarray) -> np.ndarray:
    """Removal reason of the rows ``pick`` of the space (valid rows), empty text for kept rows;
    ``flagged, kept: <reason>`` for kept rows a label-noise stage flagged."""
    prep = result.prepared
    ids = prep.ids.gather(prep.valid_positions[pick])
    marks = result.audit.select("row_id", "reason")
    if result.flagged is not None and result.flagged.height:
        flagged = result.flagged.unique("row_id", keep="last", maintain_order=True).select(
            "row_id", ("flagged, kept: " + pl.col("reason")).alias("reason"))
        marks = pl.concat([marks, flagged.filter(~pl.col("row_id").is_in(marks["row_id"].implode()))])
    frame = pl.DataFrame({"row_id": ids}).join(marks, on="row_id", how="left",
                                               maintain_order="left")
    return frame["reason"].fill_null("").to_numpy().astype(str)


def principal_components(matrix: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """The rows projected on their first ``n`` principal components, and each component's
    share of the variance: scikit-learn's ``PCA(n).fit_transform`` and
    ``explained_variance_ratio_``, signs fixed the same way (each component's largest
    coefficient positive), without importing scikit-learn (most of a second).

    Examples
    --------
    >>> xy, share = principal_components(np.array([[0.0, 0.0], [2.0, 0.1], [4.0, 0.0]]), 1)
    >>> xy.round(3).ravel().tolist(), share.round(3).tolist()
    ([-2.0, 0.0, 2.0], [0.999])
    """
    centred = np.asarray(matrix, dtype=np.float64)
    centred = centred - centred.mean(axis=0)
    _, values, axes = np.linalg.svd(centred, full_matrices=False)
    axes = axes[:n]
    strongest = np.argmax(np.abs(axes), axis=1)
    axes = axes * np.sign(axes[np.arange(len(axes)), strongest])[:, None]
    power = values**2
    return centred @ axes.T, power[:n] / power.sum()


def sample(n: int, size: int, seed: int) -> np.ndarray:
    """Every position when there are at most ``size``, else a seeded sorted sample of them.

    Examples
    --------
    >>> sample(3, 5, 0).tolist(), len(sample(100, 5, 0))
    ([0, 1, 2], 5)
    """
    if n <= size:
        return np.arange(n)
    return np.sort(np.random.default_rng(seed).choice(n, size=size, replace=False))
