"""A check both shared-method tests run on a whole run: its rows are the input's rows.

Common practice, no source: kept and removed rows keep the input's own columns and types,
their ids partition the input, and the kept rows equal the input's rows at their ids, as
polars reads the input file back (outside reference).
"""

from __future__ import annotations

from pathlib import Path

import polars as pl


def assert_run_keeps_the_input(result, path: Path, frame: pl.DataFrame) -> None:
    for part in (result.kept, result.removed):
        assert part.select(frame.columns).schema == frame.schema
    given = pl.read_parquet(path)
    ids = sorted([*result.kept["row_id"].to_list(), *result.removed["row_id"].to_list()])
    assert ids == list(range(given.height)), "kept and removed ids partition the input"
    at_ids = given.with_row_index("row_id").filter(pl.col("row_id").is_in(result.kept["row_id"]))
    assert result.kept.select(frame.columns).equals(at_ids.select(frame.columns))
