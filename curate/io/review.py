"""Review and restore: a reviewer's table of removed rows, and the ids a reviewer protects.

* ``curate review --run DIR`` writes the removed rows with their reasons and
  evidence and an empty ``decision`` column to a CSV file. A reviewer marks
  ``keep`` on the rows that must stay (see :data:`DECISIONS`).
* The pipeline file names that file in ``[input] protect_file`` (or lists ids
  in ``[input] protect``); :func:`protected_ids` reads it, and the pipeline
  never lets a stage remove those rows.

The diff of two runs is in :mod:`curate.io.diff`.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from contextlib import AbstractContextManager
from pathlib import Path
from typing import NamedTuple

import polars as pl

from curate.errors import UsageError, first_ids
from curate.io.folder import run_folder
from curate.io.outputs import Claim, claim_output
from curate.io.spreadsheet import original_text, spreadsheet_safe

__all__ = ["DECISIONS", "ReviewCounts", "claim_csv", "protected_ids", "review_table",
           "write_review"]

DECISIONS = {
    "keep": "protect the row: no stage may remove it when the pipeline file names this file",
    "remove": "no objection: the row may go",
    "": "(empty) no objection, the same as remove",
}
# The reviewer sees these first, then the input's own columns.
_LEADING = ("row_id", "decision", "stage", "method", "reason", "detail", "kept_as", "step",
            "neighbour_ids", "neighbour_labels", "neighbour_distances", "action",
            "suggested_label", "doubt")


def _joined(values: pl.Expr, digits: bool = False) -> pl.Expr:
    """A list column as one text cell, items separated by "; " (CSV cannot hold lists)."""
    items = values.list.eval(pl.element().round_sig_figs(4) if digits else pl.element())
    return items.list.eval(pl.element().cast(pl.String)).list.join("; ")


def review_table(run: str | Path) -> pl.DataFrame:
    """The removed rows of a run, with reasons, evidence and an empty ``decision`` column.

    Rows a label-noise stage flagged but kept (``action`` relabel or report)
    follow them; ``action`` says what the stage did (``remove`` for removed
    rows) and ``suggested_label`` the label it suggests. When the run wrote a
    ``doubt`` score, the most doubtful rows come first. Input columns whose
    names clash with the review's own get `` (input)`` appended; the audit's
    ``label`` is left out (the input's label column is there).

    Examples
    --------
    >>> import tempfile
    >>> from curate.api import run
    >>> folder = Path(tempfile.mkdtemp())
    >>> pl.DataFrame({"x": [0.0, 0.0, 1.0], "y": ["a", "a", "b"]}).write_csv(folder / "t.csv")
    >>> _ = run({"input": {"path": "t.csv", "label": "y"},
    ...          "stages": [{"method": "exact-duplicates"}]}, base=folder, out=folder / "run")
    >>> review_table(folder / "run").select("row_id", "decision", "reason", "kept_as", "x").rows()
    [(1, '', 'exact-copy', '0', 0.0)]
    """
    folder = run_folder(run)
    ours = _relabelled(folder)
    table = _records(pl.read_parquet(folder / "audit.parquet"), "remove",
                     pl.read_parquet(folder / "removed.parquet").drop(ours))
    if (folder / "flagged.parquet").is_file():
        flagged = pl.read_parquet(folder / "flagged.parquet")
        rows = pl.concat([pl.read_parquet(folder / name).drop(ours)
                          for name in ("kept.parquet", "removed.parquet")])
        extra = _records(flagged.drop("action"), flagged["action"], rows)
        table = pl.concat([table, extra], how="diagonal_relaxed")
    # Rows no label-noise stage scored have NaN: they go last, like missing values.
    table = table.with_columns(pl.col("doubt").fill_nan(None))
    if table["doubt"].is_not_null().any():
        table = table.sort("doubt", descending=True, nulls_last=True, maintain_order=True)
    return table


def _relabelled(folder: Path) -> list[str]:
    """``["suggested_label"]`` when a stage of the run relabelled (the column is curate's
    then, not the input's: a relabelling run refuses an input column of that name)."""
    summary = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    relabels = any(s.get("params", {}).get("action") == "relabel" for s in summary["stages"])
    return ["suggested_label"] if relabels else []


def _records(audit: pl.DataFrame, action: str | pl.Series, rows: pl.DataFrame) -> pl.DataFrame:
    """Audit records joined with the rows they describe, in the review's column order."""
    clash = {c: f"{c} (input)" for c in rows.columns
             if c not in ("row_id", "doubt") and c in _LEADING}
    rows = rows.rename(clash)
    if "doubt" not in rows.columns:
        rows = rows.with_columns(pl.lit(None, dtype=pl.Float64).alias("doubt"))
    audit = audit.drop("label").with_columns(
        pl.lit("", dtype=pl.String).alias("decision"),
        (pl.lit(action, dtype=pl.String) if isinstance(action, str) else pl.lit(action))
        .alias("action"),
        _joined(pl.col("neighbour_ids")), _joined(pl.col("neighbour_labels")),
        _joined(pl.col("neighbour_distances"), digits=True),
        pl.col("kept_as").cast(pl.String).fill_null(""),
        pl.col("suggested_label").cast(pl.String))
    table = audit.join(rows, on="row_id", how="left", maintain_order="left")
    return table.select(*_LEADING, *[c for c in rows.columns if c not in _LEADING])


class ReviewCounts(NamedTuple):
    """Rows a review lists: removed ones, and ones a label-noise stage flagged but kept."""

    removed: int
    flagged: int


def write_review(run: str | Path, out: str | Path, *, overwrite: bool = False) -> ReviewCounts:
    """Write :func:`review_table` of ``run`` to the CSV file ``out``; return how many removed
    and how many flagged-but-kept rows it lists.

    Text cells that a spreadsheet would run as a formula get a leading quote
    (:mod:`curate.io.spreadsheet`); :func:`protected_ids` takes it off again.

    Examples
    --------
    >>> write_review("no/such/run", "review.csv")
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: no/such/run is not a run folder (it has no kept.parquet)
      hint: give a folder that `curate run` wrote (its [output] folder or --out)
    """
    run_folder(run)
    with claim_csv(Path(out), overwrite, [Path(run)], ("row_id", "decision")) as claim:
        table = review_table(run)
        claim.write_file(spreadsheet_safe(table).write_csv, int(table.estimated_size()))
    removed = int((table["action"] == "remove").sum())
    return ReviewCounts(removed, table.height - removed)


def _made_by_curate(*columns: str) -> Callable[[Path], bool]:
    """Recognise a CSV curate wrote (perhaps since edited in a spreadsheet) by its first columns."""
    def check(path: Path) -> bool:
        with open(path, encoding="utf-8-sig", errors="replace") as handle:
            header = handle.readline().strip()
        sep = _separator(header) or ","
        return tuple(c.strip().strip('"') for c in header.split(sep)[:len(columns)]) == columns

    return check


def claim_csv(path: Path, overwrite: bool, reads: list[Path],
              columns: tuple[str, str]) -> AbstractContextManager[Claim]:
    """Check and claim the CSV ``path`` before the work (see :mod:`curate.io.outputs`);
    ``overwrite`` replaces only a file whose header starts with ``columns`` (one curate wrote)."""
    return claim_output(path, overwrite=overwrite, inputs=[("the run folder", r) for r in reads],
                        folder=False, owned=_made_by_curate(*columns))


def _separator(header: str) -> str | None:
    # Spreadsheets save CSV with commas, or with semicolons where the comma is a decimal mark.
    return next((sep for sep in (",", ";", "\t") if sep in header), None)


def protected_ids(path: str | Path) -> list[str]:
    """Row ids (as text) to protect, read from a review CSV or a plain list of ids.

    A file whose first line names a ``row_id`` column is a table: it needs a
    ``decision`` column too, and the rows marked ``keep`` (any case) are
    protected; ``remove`` and empty cells are no objection, anything else is
    an error. Any other file lists ids one per line (blank lines and lines
    starting with ``#`` are skipped).

    Examples
    --------
    >>> import tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> _ = (folder / "review.csv").write_text("row_id,decision,x\\n3,keep,0.5\\n4,,0.7\\n9,Keep,1\\n")
    >>> protected_ids(folder / "review.csv")
    ['3', '9']
    >>> _ = (folder / "ids.txt").write_text("# rows the inspectors confirmed\\nP-17\\nP-20\\n")
    >>> protected_ids(folder / "ids.txt")
    ['P-17', 'P-20']
    """
    path = Path(path)
    if not path.is_file():
        raise UsageError(f"protect file {path} does not exist",
                         hint="give the CSV that `curate review` wrote (marked keep), or a file "
                              "of row ids one per line")
    with open(path, encoding="utf-8-sig", newline="") as handle:  # a quoted cell may hold \r
        text = handle.read()
    header = next((line for line in text.splitlines() if line.strip()), "")
    sep = _separator(header)
    if sep is None:
        ids = [line.strip() for line in text.splitlines()
               if line.strip() and not line.lstrip().startswith("#")]
        return list(dict.fromkeys(ids))
    table = pl.read_csv(text.encode(), separator=sep, infer_schema=False)
    return _kept_by_reviewer(table.with_columns(original_text(pl.all())), path)


def _kept_by_reviewer(table: pl.DataFrame, path: Path) -> list[str]:
    for column in ("row_id", "decision"):
        if column not in table.columns:
            raise UsageError(f"protect file {path} has no {column!r} column (columns: "
                             f"{', '.join(table.columns[:8])})",
                             hint="use the CSV that `curate review` wrote, with keep in its "
                                  "decision column, or a file of row ids one per line")
    decision = table["decision"].fill_null("").str.strip_chars().str.to_lowercase()
    bad = ~decision.is_in(list(DECISIONS))
    if bad.any():
        rows = table.filter(bad)
        raise UsageError(f"protect file {path}: decision {rows['decision'][0]!r} is not one of "
                         f"keep, remove or empty, on {first_ids(rows['row_id'].to_list())}",
                         hint="write keep to protect a row; leave the cell empty (or remove) "
                              "otherwise")
    # Spaces a reviewer typed go; tabs and carriage returns may belong to an id.
    ids = table.filter(decision == "keep")["row_id"].str.strip_chars(" ")
    if ids.is_null().any() or (ids == "").any():
        raise UsageError(f"protect file {path}: a row marked keep has no row_id",
                         hint="fill in the row_id of every row marked keep")
    return list(dict.fromkeys(ids.to_list()))
