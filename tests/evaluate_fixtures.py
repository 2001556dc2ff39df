"""Data helpers for the evaluation tests: bundled and seeded tables written as CSV.

Nothing is loaded at import time. Open data comes from scikit-learn's bundled
sets (no download); synthetic data from a seeded numpy generator.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import open_data
import polars as pl

from curate.settings import Spec
from curate.spec import spec_from_dict

NOTHING_REMOVED = [{"method": "exact-duplicates"}]


def wine_csv(folder: Path) -> tuple[Path, np.ndarray, np.ndarray]:
    """Write scikit-learn's wine set as CSV; return its path, features and labels."""

    data = open_data.bunch("wine")
    frame = pl.DataFrame(data.data, schema=[f"f{j}" for j in range(data.data.shape[1])],
                         orient="row").with_columns(pl.Series("target", data.target))
    path = folder / "wine.csv"
    frame.write_csv(path)
    return path, data.data, data.target


def gaussians_csv(folder: Path, rows: int, mu: float, dims: int, seed: int,
                  flip: float = 0.0) -> tuple[Path, np.ndarray, np.ndarray]:
    """Two equally likely classes N(-mu e1, I) and N(+mu e1, I); optionally a share of
    labels flipped in the file itself. Returns the path, features and (file) labels."""
    rng = np.random.default_rng(seed)
    y = rng.integers(0, 2, size=rows)
    x = rng.normal(size=(rows, dims))
    x[:, 0] += np.where(y == 1, mu, -mu)
    if flip:
        flipped = rng.choice(rows, size=int(round(flip * rows)), replace=False)
        y[flipped] = 1 - y[flipped]
    frame = pl.DataFrame(x, schema=[f"x{j}" for j in range(dims)], orient="row").with_columns(
        pl.Series("y", y))
    path = folder / f"gauss-{seed}.csv"
    frame.write_csv(path)
    return path, x, y


def spec_for(path: Path, label: str, stages: list[dict[str, Any]] | None = None,
             **sections: Any) -> Spec:
    """A checked pipeline over ``path`` with the given stages (default: one that removes
    nothing from continuous data)."""
    return spec_from_dict({"input": {"path": str(path), "label": label, **sections.pop("input", {})},
                           "stages": stages or NOTHING_REMOVED, **sections}, base=path.parent)
