"""The regression demo: hours until service with faults as announced, and its run.

Outside references: polars (duplicate detection, joins and range filters) and
numpy (standard deviation). The shares and sizes checked below are the
generator's own specification (curate.demo.hours.FAULT_SHARES, the issue's
"injected outliers": moved by several standard deviations), not results
produced by curate's cleaning code.
"""

from __future__ import annotations

import json

import numpy as np
import polars as pl
import pytest

from curate.cli import main
from curate.demo import data as demo_data
from curate.demo import hours
from curate.io.task import detect_task

ROWS = 2000
FEATURES = list(hours.FEATURES)


@pytest.fixture(scope="module")
def demo() -> tuple[pl.DataFrame, pl.DataFrame]:
    return hours.generate(rows=ROWS, seed=11)


def _faulty(truth: pl.DataFrame, kind: str) -> pl.DataFrame:
    return truth.filter(pl.col("fault") == kind)


def test_same_seed_same_frames(demo) -> None:
    again = hours.generate(rows=ROWS, seed=11)
    assert again[0].equals(demo[0]) and again[1].equals(demo[1])


def test_shares_as_specified_and_the_target_reads_as_regression(demo) -> None:
    readings, truth = demo
    counts = dict(truth["fault"].value_counts().iter_rows())
    for kind, share in hours.FAULT_SHARES.items():
        assert abs(counts.get(kind, 0) - share * ROWS) <= 1, kind
    assert detect_task(readings[hours.TARGET]).task == "regression"
    assert readings[hours.TARGET].min() > 0


def test_outliers_moved_by_several_standard_deviations(demo) -> None:
    readings, truth = demo
    moved = _faulty(truth, "outlier")
    clean = readings.filter(~pl.col("reading_id").is_in(truth["reading_id"].implode()))
    sd = float(np.std(clean[hours.TARGET].to_numpy()))
    shift = (moved["given_hours"] - moved["original_hours"]).abs().to_numpy()
    # 3 to 5 standard deviations of the clean hours, up to the sample's own spread.
    assert shift.min() >= 2.5 * sd and shift.max() <= 5.5 * sd
    given = readings.join(moved, on="reading_id")
    assert (given[hours.TARGET] == given["given_hours"]).all()


def test_copies_found_by_polars_are_exactly_the_copies(demo) -> None:
    readings, truth = demo
    copies = truth.filter(pl.col("fault").is_in(["re-sent", "conflict"]))
    dup = readings.filter(readings.select(FEATURES).is_duplicated())
    assert set(dup["reading_id"]) == set(copies["reading_id"]) | set(copies["source_id"])
    conflict = _faulty(truth, "conflict")
    pairs = readings.join(conflict.select("reading_id", "source_id"), on="reading_id").join(
        readings.select(pl.col("reading_id").alias("source_id"),
                        pl.col(hours.TARGET).alias("source_hours")), on="source_id")
    assert ((pairs[hours.TARGET] - pairs["source_hours"]).abs() > 0).all()


def test_schema_rows_are_the_rows_out_of_range(demo) -> None:
    readings, truth = demo
    out = pl.any_horizontal([~pl.col(c).is_between(low, high)
                             for c, (low, high) in demo_data.RANGES.items()])
    assert set(readings.filter(out)["reading_id"]) == set(_faulty(truth, "schema")["reading_id"])


def test_the_regression_demo_runs_and_removes_the_resent_rows(tmp_path, capsys) -> None:
    assert main(["demo", "--task", "regression", "--rows", "1500", "--out", str(tmp_path),
                 "--quiet"]) == 0
    text = capsys.readouterr().out
    assert "task: regression" in text and "outlier" in text
    summary = json.loads((tmp_path / "run-hours" / "summary.json").read_text())
    assert summary["target"]["unit"] == "h"
    audit = pl.read_parquet(tmp_path / "run-hours" / "audit.parquet")
    truth = pl.read_csv(tmp_path / "data" / "hours-truth.csv")
    resent = set(_faulty(truth, "re-sent")["reading_id"])
    assert resent == set(audit.filter(pl.col("stage") == "re-sent rows")["row_id"])
