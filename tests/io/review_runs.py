"""Small runs for the review, protect and diff tests; nothing is loaded at import time.

Data: scikit-learn's bundled wine set (no download), with a seeded share of
labels moved to another class so that editing stages have rows to remove.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import open_data
import polars as pl

from curate.api import run


def wine_table(flip: float = 0.1, seed: int = 3) -> pl.DataFrame:
    """Wine as a table: text ids ``w000``..., features ``f0``..., label ``y`` (class names)."""
    X, y = open_data.load("wine")
    rng = np.random.default_rng(seed)
    y = y.copy()
    for i in rng.choice(len(y), int(round(flip * len(y))), replace=False):
        y[i] = (y[i] + rng.integers(1, 3)) % 3
    frame = pl.DataFrame(X, schema=[f"f{j}" for j in range(X.shape[1])], orient="row")
    return frame.with_columns(pl.Series("id", [f"w{i:03d}" for i in range(len(y))]),
                              pl.Series("y", [f"cultivar {c}" for c in y]))


def make_run(folder: Path, stages: list[dict[str, Any]], out: str, *, table: str = "table.csv",
             **input_: Any) -> Path:
    """Run ``stages`` over ``folder/table`` (already written) into ``folder/out``."""
    spec = {"input": {"path": table, "label": "y", "id": "id", **input_}, "stages": stages,
            "output": {"folder": out, "report": False}}
    run(spec, base=folder, out=folder / out)
    return folder / out


def audit_of(run_folder: Path) -> dict[str, tuple[str, str]]:
    """Removed row id -> (stage, reason), read straight from the run's audit file."""
    audit = pl.read_parquet(run_folder / "audit.parquet")
    return {str(r): (s, why) for r, s, why in audit.select("row_id", "stage", "reason").iter_rows()}


def kept_of(run_folder: Path) -> set[str]:
    """Kept row ids, read straight from the run's kept file."""
    return {str(r) for r in pl.read_parquet(run_folder / "kept.parquet")["row_id"]}
