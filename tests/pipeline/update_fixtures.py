"""Runs, updates, and their oracle: the full run on old + new rows (CHECKS.md, "Updates").

An update keeps the run's fitted space, so the oracle is the full pipeline run
on the old rows followed by the new rows, with the space fitted on the old
rows (curate's own stage loop, not the update's code). The tables are data
sets that scikit-learn ships inside the package (no download). Where a test
needs copies, a seeded share of rows is sent again, some with another label
and some slightly moved: seeded corruption of open data, as CHECKS.md
describes. Nothing is loaded at import time.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import open_data
import polars as pl

from curate.api import _as_spec, update
from curate.api import run as run_pipeline
from curate.pipeline.loop import execute
from curate.pipeline.prepare import prepare_frame
from curate.pipeline.records import RunResult

COMPARED = ("row_id", "stage", "method", "reason", "detail", "label", "neighbour_ids",
            "neighbour_labels", "neighbour_distances", "kept_as", "step")


def open_table(name: str, *, copies: int = 0, moved: float = 0.0, flip: float = 0.0,
               seed: int = 0, rows: int | None = None, nominal: int = 0) -> pl.DataFrame:
    """A bundled scikit-learn table as features ``c0..``, label ``y`` and id ``reading``.

    ``copies`` rows are sent again (40% of them with another label), each
    copy moved by up to ``moved`` of its column's range when ``moved`` > 0;
    ``flip`` is a seeded share of rows given another label; ``rows`` keeps a
    seeded sample; the first ``nominal`` columns become text categories (the
    quartile each value falls in). Rows come in a seeded random order.
    """
    X, y = open_data.load(name)
    rng = np.random.default_rng(seed)
    if rows is not None:
        keep = np.sort(rng.choice(len(y), rows, replace=False))
        X, y = X[keep], y[keep]
    X = X[:, X.std(axis=0) > 0]  # constant columns only earn a warning
    y = y.astype(np.int64).copy()
    classes = int(y.max()) + 1
    if flip:
        hit = rng.choice(len(y), int(round(flip * len(y))), replace=False)
        y[hit] = (y[hit] + rng.integers(1, classes, len(hit))) % classes
    if copies:
        source = rng.choice(len(y), copies)
        extra, labels = X[source].copy(), y[source].copy()
        other = rng.random(copies) < 0.4
        labels[other] = (labels[other] + 1) % classes
        if moved:
            span = X.max(axis=0) - X.min(axis=0)
            extra += rng.uniform(-moved, moved, extra.shape) * span
        X, y = np.vstack([X, extra]), np.concatenate([y, labels])
    order = rng.permutation(len(y))
    frame = pl.DataFrame({f"c{j}": X[order, j] for j in range(X.shape[1])})
    for j in range(nominal):
        cuts = np.quantile(X[:, j], [0.25, 0.5, 0.75])
        frame = frame.with_columns(pl.Series(f"c{j}", [f"q{int(np.searchsorted(cuts, v))}"
                                                      for v in X[order, j]]))
    return frame.with_columns(pl.Series("y", [f"class-{v}" for v in y[order]]),
                              pl.Series("reading", 1000 + 7 * np.arange(len(y))))


@dataclass
class Case:
    """An update of a run, and the full run it must equal where the method claims so."""

    folder: Path
    pipeline: dict[str, Any]
    updated: RunResult
    oracle: RunResult
    old_rows: int


def pipeline(stages: list[dict[str, Any]], backend: str = "auto",
             **input_extra: Any) -> dict[str, Any]:
    """A pipeline over ``part0.csv`` (label ``y``, id ``reading``) with these stages and
    neighbour backend; no report is written (its plots take most of the time on tables this
    small)."""
    return {"input": {"path": "part0.csv", "label": "y", "id": "reading"} | input_extra,
            "stages": stages, "output": {"report": False}, "run": {"backend": backend}}


def run_and_update(folder: Path, table: pl.DataFrame, pipe: dict[str, Any], share: float,
                   parts: int = 1, space: dict[str, Any] | None = None) -> Case:
    """Run on the first ``share`` of the rows, then add the rest in ``parts`` updates."""
    if space:
        pipe = pipe | {"space": space}
    n = table.height
    cuts = [int(round(n * share))]
    cuts += [cuts[0] + int(round((n - cuts[0]) * (i + 1) / parts)) for i in range(parts)]
    table.slice(0, cuts[0]).write_csv(folder / "part0.csv")
    run_pipeline(pipe, base=folder, out=folder / "run0")
    updated = None
    for i in range(1, len(cuts)):
        table.slice(cuts[i - 1], cuts[i] - cuts[i - 1]).write_csv(folder / f"part{i}.csv")
        updated = update(pipe, base=folder, run=folder / f"run{i - 1}",
                         new=folder / f"part{i}.csv", out=folder / f"run{i}")
    assert updated is not None
    table.write_csv(folder / "all.csv")
    spec = _as_spec(pipe | {"input": pipe["input"] | {"path": "all.csv"}}, folder, ())
    oracle = execute(prepare_frame(spec, table, np.arange(n) < cuts[0]))
    return Case(folder, pipe, updated, oracle, cuts[0])


def assert_same_as_full_run(case: Case) -> None:
    """Kept ids, removed ids and every audit column that carries reasons and evidence."""
    ours, full = case.updated, case.oracle
    assert ours.kept["row_id"].sort().to_list() == full.kept["row_id"].sort().to_list()
    assert ours.removed["row_id"].sort().to_list() == full.removed["row_id"].sort().to_list()
    a = ours.audit.sort("row_id").select(COMPARED)
    b = full.audit.sort("row_id").select(COMPARED)
    for column in COMPARED:
        mine, theirs = a[column].to_list(), b[column].to_list()
        for row_id, x, y in zip(a["row_id"].to_list(), mine, theirs, strict=True):
            assert x == y, (f"audit column {column!r} differs for row {row_id}: update {x!r}, "
                            f"full run {y!r}")


def stage_report(case: Case, number: int) -> dict[str, Any]:
    """The update's summary record of stage ``number`` (from 0)."""
    report: dict[str, Any] = case.updated.summary["update"]["stages"][number]
    return report
