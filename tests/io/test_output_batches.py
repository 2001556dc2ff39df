"""kept.parquet and removed.parquet are written in row batches sized by the memory setting.

The files are checked against polars reading the input and filtering it by the
audit's ids, and their batches against pyarrow's Parquet metadata (one row
group per batch), never against a copy curate made itself.
"""

from __future__ import annotations

import numpy as np
import polars as pl
import pyarrow.parquet as pq
import pytest

import curate
from curate.cli import main
from curate.io.batches import batch_rows, write_rows


def test_write_rows_writes_one_row_group_per_non_empty_batch(tmp_path):
    frame = pl.DataFrame({"a": np.arange(10), "b": [f"v{i}" for i in range(10)]})
    mask = np.array([1, 1, 0, 0, 0, 0, 1, 0, 1, 1], dtype=bool)
    seen: list[int] = []
    written = write_rows(frame, mask, tmp_path / "part.parquet", 3, seen.append)
    # batches of 3 input rows: [0, 1, 2] -> 2 rows, [3, 4, 5] -> none, [6, 7, 8] -> 2, [9] -> 1
    assert seen == [2, 2, 1] and written == 5
    assert pq.ParquetFile(tmp_path / "part.parquet").num_row_groups == 3
    assert pl.read_parquet(tmp_path / "part.parquet").equals(frame.filter(pl.Series(mask)))


def test_no_row_selected_still_writes_the_columns(tmp_path):
    frame = pl.DataFrame({"a": [1.5, 2.5], "b": ["x", "y"]})
    write_rows(frame, np.zeros(2, dtype=bool), tmp_path / "none.parquet", 1)
    back = pl.read_parquet(tmp_path / "none.parquet")
    assert back.height == 0 and back.schema == frame.schema


def test_a_run_streams_its_outputs_in_batches_of_the_memory_setting(tmp_path):
    """About 10 MB of rows under a 16 MB setting: an eighth of it per batch, so several."""
    rng = np.random.default_rng(0)
    n = 6000
    frame = pl.DataFrame({"x": rng.integers(0, 5000, size=n) / 10, "note": ["z" * 1500] * n,
                          "y": rng.choice(["a", "b"], size=n)})
    frame.write_csv(tmp_path / "table.csv")
    result = curate.run({"input": {"path": "table.csv", "label": "y", "ignore": ["note"]},
                         "run": {"memory_mb": 16}, "output": {"report": False},
                         "stages": [{"method": "exact-duplicates"}]},
                        base=tmp_path, out=tmp_path / "run")
    per_batch = batch_rows(result.rows_frame(), 16)
    assert per_batch < n
    source = pl.read_csv(tmp_path / "table.csv").with_row_index("row_id")
    gone = pl.read_parquet(tmp_path / "run" / "audit.parquet")["row_id"]
    for name, rows in (("kept", source.filter(~pl.col("row_id").is_in(gone.implode()))),
                       ("removed", source.filter(pl.col("row_id").is_in(gone.implode())))):
        path = tmp_path / "run" / f"{name}.parquet"
        back = pl.read_parquet(path)
        assert back.select(rows.columns).equals(rows.with_columns(pl.col("row_id").cast(pl.Int64)))
        # every batch of input rows holds kept and removed rows here: one row group each
        assert pq.ParquetFile(path).num_row_groups == -(-n // per_batch) > 1


@pytest.mark.parametrize("value", ["0", "8", "-1"])
def test_a_memory_setting_below_the_minimum_is_refused_on_the_command_line(
        value, make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, [{"method": "exact-duplicates"}])
    code = main(["run", str(path), "--quiet", "--memory-mb", value])
    err = capsys.readouterr().err
    assert code == 2, err
    assert f"--memory-mb {value}" in err and "16" in err and "hint:" in err
    assert not (path.parent / "run").exists()
