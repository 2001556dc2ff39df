"""Helpers shared by the Dask cluster tests: a LocalCluster, bundled data as files, runs.

Nothing is started or loaded at import time. The data are scikit-learn's
bundled wine, breast cancer and digits sets (shipped inside the package, no download).
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import numpy as np
import open_data
import polars as pl

from curate.api import run
from curate.pipeline.records import RunResult


@contextmanager
def local_cluster(**config: Any) -> Iterator[str]:
    """Two worker processes, one thread each; yields the scheduler address.

    ``config`` is set (dask.config) before the scheduler starts, which reads it then.
    """
    import dask
    from distributed import LocalCluster

    with dask.config.set(config), LocalCluster(n_workers=2, threads_per_worker=1,
                                               processes=True, dashboard_address="127.0.0.1:0") as cluster:
        yield cluster.scheduler_address


def write_bundled(name: str, folder: Path, *, copies: int = 0, near: int = 0,
                  seed: int = 0) -> Path:
    """Write a bundled set as CSV with label column ``y``, plus seeded exact and near copies.

    Constant columns are left out. Near copies are jittered by at most 1e-4 of
    each column's range.
    """
    data = open_data.bunch(name)
    X, y = np.asarray(data.data, dtype=np.float64), np.asarray(data.target)
    X = X[:, X.max(axis=0) > X.min(axis=0)]  # digits has blank pixels; curate warns on those
    rng = np.random.default_rng(seed)
    exact = rng.choice(len(y), copies, replace=False)
    jittered = rng.choice(len(y), near, replace=False)
    spread = X.max(axis=0) - X.min(axis=0)
    noise = rng.uniform(-1e-4, 1e-4, size=(near, X.shape[1])) * spread
    X = np.vstack([X, X[exact], X[jittered] + noise])
    y = np.concatenate([y, y[exact], y[jittered]])
    columns = [f"f{j}" for j in range(X.shape[1])]
    frame = pl.DataFrame(X, schema=columns).with_columns(pl.Series("y", y.astype(str)))
    path = folder / f"{name}.csv"
    frame.write_csv(path)
    return path


def run_pipeline(path: Path, stages: list[dict[str, Any]], cluster: dict[str, Any] | None = None,
                 seed: int = 0) -> RunResult:
    """Run stages on a CSV with or without a [cluster] section; nothing is written."""
    spec: dict[str, Any] = {"input": {"path": str(path), "label": "y"}, "stages": stages,
                            "run": {"seed": seed}}
    if cluster is not None:
        spec["cluster"] = cluster
    return run(spec, base=path.parent)
