"""Columns that are not what their type says are named, not silently encoded.

Facts of the trade behind these checks (common practice, no source): a text
column with a different value on almost every row (an id, free text, a
timestamp written as text) is not a categorical feature, and one-hot encoding
it costs rows x distinct values; a numeric column with a stray text cell
("n/a") is still a numeric column with one bad cell. The data is scikit-learn's
bundled iris set, with such columns added.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import polars as pl
import pytest
from sklearn.preprocessing import MinMaxScaler

import curate
from curate.cli import main
from curate.errors import UsageError
from curate.settings import EngineSettings, SpaceSettings
from curate.space import build_space

ENN = [{"method": "enn", "k": 3}]


def iris_frame(iris: tuple[np.ndarray, np.ndarray]) -> pl.DataFrame:
    X, y = iris
    frame = pl.DataFrame({f"f{j}": X[:, j] for j in range(X.shape[1])})
    return frame.with_columns(pl.Series("y", [f"class_{v}" for v in y]))


def run_cli(pipeline: Path, capsys: pytest.CaptureFixture[str]) -> tuple[int, str]:
    code = main(["run", str(pipeline), "--quiet"])
    return code, capsys.readouterr().err


def test_an_id_like_text_column_is_refused_with_its_count_and_the_fix(iris, make_pipeline, capsys):
    frame = iris_frame(iris).with_columns(pl.Series("note", [f"seen at 08:{i:04d}" for i in
                                                             range(150)]))
    path = make_pipeline(frame, ENN)
    code, err = run_cli(path, capsys)
    assert code == 3, err
    for words in ("'note'", "150 distinct values in 150 rows", "ignore", "features",
                  'type = "category"'):
        assert words in err, err
    assert "Traceback" not in err
    assert not (path.parent / "run").exists()


@pytest.mark.parametrize("declared", [
    {"input_": {"ignore": ["note"]}},
    {"input_": {"features": ["f0", "f1", "f2", "f3"]}},
    {"extra": {"input.columns.note": {"type": "category"}}},
])
def test_a_declared_text_column_is_accepted(iris, make_pipeline, capsys, declared):
    frame = iris_frame(iris).with_columns(pl.Series("note", [f"n{i}" for i in range(150)]))
    path = make_pipeline(frame, ENN, **declared)
    code, err = run_cli(path, capsys)
    assert code == 0, err


def test_a_few_levels_are_no_id(iris, make_pipeline, capsys):
    """Three sites over 150 rows are a category: no refusal."""
    frame = iris_frame(iris).with_columns(pl.Series("site", ["north", "south", "east"] * 50))
    code, err = run_cli(make_pipeline(frame, ENN), capsys)
    assert code == 0, err


def test_a_nominal_encoding_larger_than_the_memory_setting_stops_before_it_is_built():
    """One-hot of 3,000 distinct values on 3,000 rows takes 3,000 x 3,000 float64 values,
    72 MB (a float64 takes 8 bytes, common practice, no source): over a 16 MB setting."""
    n = 3000
    frame = pl.DataFrame({"x": np.arange(n, dtype=float), "tag": [f"t{i}" for i in range(n)]})
    with pytest.raises(UsageError) as caught:
        build_space(frame, {"x": "float", "tag": "category"}, SpaceSettings(), list(range(n)),
                    EngineSettings(memory_mb=16))
    message = str(caught.value)
    assert f"{n * n * 8 / 2**20:,.0f} MB" in message
    assert "'tag' (3,000 values)" in message and "16 MB" in message
    assert caught.value.exit_code == 2


def with_stray_cells(iris: tuple[np.ndarray, np.ndarray]) -> tuple[pl.DataFrame, list[int]]:
    """iris with column f2 written as text and two of its cells replaced by stray text."""
    frame = iris_frame(iris)
    text = [repr(float(v)) for v in frame["f2"]]
    bad = [7, 90]
    text[7], text[90] = "n/a", "4,1"
    return frame.with_columns(pl.Series("f2", text)), bad


def test_stray_text_in_a_numeric_column_stops_the_run_naming_rows_and_values(
        iris, make_pipeline, capsys):
    frame, _ = with_stray_cells(iris)
    path = make_pipeline(frame, ENN)
    code, err = run_cli(path, capsys)
    assert code == 3, err
    for words in ("'f2'", "2 rows (first: 7, 90)", "'n/a'", "'4,1'", "quarantine", "hint:"):
        assert words in err, err
    assert not (path.parent / "run").exists()


def test_stray_text_is_quarantined_and_the_column_stays_numeric(iris, tmp_path):
    frame, bad = with_stray_cells(iris)
    frame.write_csv(tmp_path / "table.csv")
    result = curate.run({"input": {"path": "table.csv", "label": "y",
                                   "on_invalid": "quarantine"},
                         "stages": [{"method": "exact-duplicates"}]}, base=tmp_path)
    schema_rows = result.audit.filter(pl.col("reason") == "schema")
    assert sorted(schema_rows["row_id"].to_list()) == bad
    assert all("parses_as_number" in d and "'f2'" in d for d in schema_rows["detail"])
    assert result.prepared.kinds["f2"] == "float"
    # outside reference: scikit-learn's MinMaxScaler on the numbers of the other rows
    X, _ = iris
    rest = np.delete(X, bad, axis=0)
    expected = MinMaxScaler().fit_transform(rest)[:, 2]
    column = result.prepared.space.columns.index("f2")
    np.testing.assert_allclose(result.prepared.space.matrix[:, column], expected, atol=1e-12)
    # the run folder keeps the input's columns untouched: f2 as the text it was
    assert result.removed.filter(pl.col("row_id") == 7)["f2"].to_list() == ["n/a"]


def test_a_mostly_text_column_is_not_taken_for_numbers(iris, make_pipeline, capsys):
    """A site code that happens to be a number on a few rows is text, not a number column."""
    frame = iris_frame(iris).with_columns(
        pl.Series("site", ["north", "south", "east", "12"] * 37 + ["north", "south"]))
    code, err = run_cli(make_pipeline(frame, ENN), capsys)
    assert code == 0, err


def test_stray_text_after_the_rows_that_set_the_csv_types_is_named_too(make_pipeline, capsys):
    """The type of a CSV column is guessed from its first rows; a stray cell past them is
    still a stray cell of a numeric column, not an unreadable file."""
    n = 10_050
    x = [f"{i % 97}.5" for i in range(n)]
    x[10_020] = "n/a"
    frame = pl.DataFrame({"x": x, "y": ["a", "b"] * (n // 2)})
    path = make_pipeline(frame, [{"method": "exact-duplicates"}])
    code, err = run_cli(path, capsys)
    assert code == 3, err
    assert "'x'" in err and "1 row (10020)" in err and "'n/a'" in err
