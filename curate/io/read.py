"""Reading the input (CSV, Parquet, folders, globs), row identity, and its hash."""

from __future__ import annotations

import glob
import hashlib
from pathlib import Path

import numpy as np
import polars as pl

from curate.errors import InputError, PipelineFileError, UsageError, first_ids
from curate.io.globbing import glob_files, unique_files

__all__ = ["file_sha256", "input_files", "read_input", "row_ids"]

POSITION = "__curate_position"


def input_files(path: Path) -> list[Path]:
    """Resolve a file, a folder of Parquet/CSV files or a glob to a sorted list of files.

    Each real file is listed once, however many links lead to it (a glob
    through a symbolic-link loop included: see :mod:`curate.io.globbing`).

    Examples
    --------
    >>> input_files(Path("/no/such/readings.csv"))
    Traceback (most recent call last):
    ...
    curate.errors.PipelineFileError: input /no/such/readings.csv does not exist
      hint: fix [input] path in the pipeline file (relative paths start at the pipeline file's folder)
    """
    text = str(path)
    if glob.has_magic(text):
        files = glob_files(text)
    elif path.is_dir():
        files = unique_files(sorted(p for p in path.iterdir() if p.suffix in (".parquet", ".csv")))
    elif path.is_file():
        files = [path]
    else:
        files = []
    if not files:
        raise PipelineFileError(
            f"input {path} does not exist" if not path.is_dir() else f"folder {path} has no "
            ".parquet or .csv files",
            hint="fix [input] path in the pipeline file (relative paths start at the pipeline "
                 "file's folder)")
    kinds = {p.suffix for p in files}
    if not kinds <= {".csv", ".parquet"} or len(kinds) > 1:
        raise UsageError(f"input {path} mixes or uses unsupported file types {sorted(kinds)}",
                         hint="give CSV files or Parquet files, one kind per input")
    return files


def _scan(files: list[Path], infer: int | None = 10000) -> pl.LazyFrame:
    if files[0].suffix == ".parquet":
        return pl.scan_parquet([str(p) for p in files])
    return pl.concat([pl.scan_csv(str(p), infer_schema_length=infer) for p in files],
                     how="vertical")


def _collect(files: list[Path], columns: list[str] | None) -> pl.DataFrame:
    """Read the files; a CSV cell that breaks the type guessed from the first rows means
    reading again with types guessed from every row (that column then reads as text, and
    the input check names the stray cells: see :mod:`curate.io.suspect`)."""
    def read(infer: int | None) -> pl.DataFrame:
        lazy = _scan(files, infer)
        return (lazy if columns is None else lazy.select(columns)).collect()

    try:
        return read(10000)
    except pl.exceptions.ComputeError as err:
        if files[0].suffix != ".csv" or "could not parse" not in str(err):
            raise
    return read(None)


def read_input(path: Path, columns: list[str] | None = None) -> pl.DataFrame:
    """Read the input table (only ``columns`` when given).

    Examples
    --------
    >>> import tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> _ = (folder / "t.csv").write_text("a,b\\n1,x\\n2,y\\n")
    >>> read_input(folder / "t.csv", ["a"]).to_dict(as_series=False)
    {'a': [1, 2]}
    """
    files = input_files(path)
    try:
        frame = _collect(files, columns)
    except (pl.exceptions.PolarsError, OSError) as err:
        first = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
        raise InputError(f"cannot read input {path}: {first}",
                         hint="check that the file is valid CSV (header row, same number of "
                              "fields on every line) or Parquet") from None
    if frame.height == 0:
        raise InputError(f"input {path} has no rows", hint="give a table with at least one data row")
    return frame


def row_ids(frame: pl.DataFrame, id_column: str | None, source: str) -> pl.Series:
    """Return the row id of every row: the id column, else the 0-based input position.

    Examples
    --------
    >>> row_ids(pl.DataFrame({"a": [5, 6]}), None, "t.csv").to_list()
    [0, 1]
    >>> row_ids(pl.DataFrame({"id": [7, 7]}), "id", "t.csv")
    Traceback (most recent call last):
    ...
    curate.errors.InputError: t.csv: id column 'id' has repeated values: 2 rows (first: 7, 7)
      hint: make the ids unique, or drop `id` from [input] to number rows by position
    """
    if id_column is None:
        return pl.Series("row_id", np.arange(frame.height, dtype=np.int64))
    if id_column not in frame.columns:
        raise InputError(f"{source}: id column {id_column!r} is not in the input "
                         f"(columns: {', '.join(frame.columns[:12])})",
                         hint="fix [input] id, or remove it to number rows by position")
    ids = frame[id_column]
    if ids.null_count():
        bad = np.flatnonzero(ids.is_null().to_numpy()).tolist()
        raise InputError(f"{source}: id column {id_column!r} is empty at positions "
                         f"{first_ids(bad)}", hint="give every row an id")
    repeated = ids.filter(ids.is_duplicated())
    if len(repeated):
        raise InputError(f"{source}: id column {id_column!r} has repeated values: "
                         f"{first_ids(repeated.sort().to_list())}",
                         hint="make the ids unique, or drop `id` from [input] to number rows "
                              "by position")
    return ids.alias("row_id")


def file_sha256(path: Path) -> str:
    """Hash every file of the input, in name order."""
    digest = hashlib.sha256()
    for file in input_files(path):
        with open(file, "rb") as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                digest.update(block)
    return digest.hexdigest()
