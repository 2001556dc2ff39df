"""The report of a run with a label-noise stage: the doubt section agrees with summary.json.

Outside references: Python's html.parser (report_fixtures) for the page, the PNG signature
for its pictures, json for summary.json, and numpy's quantile for the spread of the doubt
column that kept.parquet and removed.parquet hold.
"""

from __future__ import annotations

import json

import numpy as np
import polars as pl
from report_fixtures import Page, check_images, keyed_numbers_match

from curate.api import run


def test_doubt_section_matches_the_summary_and_the_written_scores(tmp_path, wine):
    X, y = wine
    rng = np.random.default_rng(1)
    chosen = rng.choice(len(y), 18, replace=False)
    y[chosen] = (y[chosen] + 1) % 3
    pl.DataFrame(X[:, :6], schema=[f"f{j}" for j in range(6)]).with_columns(
        pl.Series("y", y)).write_parquet(tmp_path / "t.parquet")
    run({"input": {"path": "t.parquet", "label": "y"},
         "stages": [{"name": "suspects", "method": "committee", "models": ["knn", "linear"],
                     "action": "report"},
                    {"name": "mislabels", "method": "class-thresholds",
                     "models": ["knn", "linear"]}]}, base=tmp_path, out=tmp_path / "run")
    folder = tmp_path / "run"
    summary = json.loads((folder / "summary.json").read_text())
    page = Page.read(folder / "report.html")
    assert "doubt" in page.sections
    check_images(page)
    keyed_numbers_match(page, {"": summary}, skip="seconds")
    assert {"doubt.rows_scored", "doubt.mean", "doubt.at_least.0.75"} <= set(page.keyed)
    doubt = pl.concat([pl.read_parquet(folder / f)["doubt"]
                       for f in ("kept.parquet", "removed.parquet")]).to_numpy()
    assert summary["doubt"]["median"] == np.quantile(doubt, 0.5)
    assert summary["doubt"]["at_least"]["0.9"] == int(np.sum(doubt >= 0.9))
    assert summary["rows_flagged_kept"] == summary["stages"][0]["flagged_kept"] > 0
