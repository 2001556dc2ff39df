"""Review and restore: a reviewer's table of removed rows, protected ids, and the diff of two runs.

* ``curate review --run DIR`` writes the removed rows with their reasons and
  evidence and an empty ``decision`` column to a CSV file. A reviewer marks
  ``keep`` on the rows that must stay (see :data:`DECISIONS`).
* The pipeline file names that file in ``[input] protect_file`` (or lists ids
  in ``[input] protect``); :func:`protected_ids` reads it, and the pipeline
  never lets a stage remove those rows.
* ``curate diff RUN_A RUN_B`` lists the rows whose fate changed between two
  runs (kept to removed, removed to kept, removed by another stage or for
  another reason) with the audit's words from each run.
"""

from __future__ import annotations

import argparse
import json
import sys
from contextlib import nullcontext
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import polars as pl

from curate.errors import UsageError, first_ids
from curate.outputs import claim_output, settle

__all__ = ["CHANGES", "DECISIONS", "RUN_FOLDER_FILES", "RunDiff", "diff_runs", "diff_text",
           "fates", "protected_ids", "register", "review_table", "run_folder", "write_review"]

DECISIONS = {
    "keep": "protect the row: no stage may remove it when the pipeline file names this file",
    "remove": "no objection: the row may go",
    "": "(empty) no objection, the same as remove",
}
RUN_FOLDER_FILES = ("kept.parquet", "removed.parquet", "audit.parquet", "summary.json")
# The reviewer sees these first, then the input's own columns.
_LEADING = ("row_id", "decision", "stage", "method", "reason", "detail", "kept_as", "step",
            "neighbour_ids", "neighbour_labels", "neighbour_distances")


def run_folder(folder: str | Path) -> Path:
    """Return ``folder`` as a path after checking that it holds a run's files.

    Examples
    --------
    >>> run_folder("no/such/run")
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: no/such/run is not a run folder (it has no kept.parquet)
      hint: give a folder that `curate run` wrote (its [output] folder or --out)
    """
    path = Path(folder)
    settle(path)
    missing = [name for name in RUN_FOLDER_FILES if not (path / name).is_file()]
    if missing:
        raise UsageError(f"{path} is not a run folder (it has no {missing[0]})",
                         hint="give a folder that `curate run` wrote (its [output] folder or --out)")
    return path


def _joined(values: pl.Expr, digits: bool = False) -> pl.Expr:
    """A list column as one text cell, items separated by "; " (CSV cannot hold lists)."""
    items = values.list.eval(pl.element().round_sig_figs(4) if digits else pl.element())
    return items.list.eval(pl.element().cast(pl.String)).list.join("; ")


def review_table(run: str | Path) -> pl.DataFrame:
    """The removed rows of a run, with reasons, evidence and an empty ``decision`` column.

    Input columns whose names clash with the review's own get `` (input)``
    appended; the audit's ``label`` is left out (the input's label column is
    there).

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
    audit = pl.read_parquet(folder / "audit.parquet").drop("label")
    removed = pl.read_parquet(folder / "removed.parquet")
    clash = {c: f"{c} (input)" for c in removed.columns if c != "row_id" and c in _LEADING}
    removed = removed.rename(clash)
    audit = audit.with_columns(
        pl.lit("", dtype=pl.String).alias("decision"),
        _joined(pl.col("neighbour_ids")), _joined(pl.col("neighbour_labels")),
        _joined(pl.col("neighbour_distances"), digits=True),
        pl.col("kept_as").cast(pl.String).fill_null(""))
    table = audit.join(removed, on="row_id", how="left", maintain_order="left")
    return table.select(*_LEADING, *[c for c in removed.columns if c != "row_id"])


def _made_by_curate(*columns: str) -> Any:
    """Recognise a CSV curate wrote (perhaps since edited in a spreadsheet) by its first columns."""
    def check(path: Path) -> bool:
        with open(path, encoding="utf-8-sig", errors="replace") as handle:
            header = handle.readline().strip()
        sep = _separator(header) or ","
        return tuple(c.strip().strip('"') for c in header.split(sep)[:len(columns)]) == columns

    return check


def _claim_csv(path: Path, overwrite: bool, reads: list[Path], columns: tuple[str, str]) -> Any:
    """Check and claim the CSV ``path`` before the work; ``overwrite`` replaces only a file whose
    header starts with ``columns`` (one curate wrote)."""
    return claim_output(path, overwrite=overwrite, inputs=[("the run folder", r) for r in reads],
                        folder=False, owned=_made_by_curate(*columns))


def write_review(run: str | Path, out: str | Path, *, overwrite: bool = False) -> int:
    """Write :func:`review_table` of ``run`` to the CSV file ``out``; return its row count.

    Examples
    --------
    >>> write_review("no/such/run", "review.csv")
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: no/such/run is not a run folder (it has no kept.parquet)
      hint: give a folder that `curate run` wrote (its [output] folder or --out)
    """
    run_folder(run)
    with _claim_csv(Path(out), overwrite, [Path(run)], ("row_id", "decision")) as claim:
        table = review_table(run)
        claim.write_file(table.write_csv, int(table.estimated_size()))
    return table.height


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
    text = path.read_text(encoding="utf-8-sig")
    header = next((line for line in text.splitlines() if line.strip()), "")
    sep = _separator(header)
    if sep is None:
        ids = [line.strip() for line in text.splitlines()
               if line.strip() and not line.lstrip().startswith("#")]
        return list(dict.fromkeys(ids))
    table = pl.read_csv(text.encode(), separator=sep, infer_schema=False)
    return _kept_by_reviewer(table, path)


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
    ids = table.filter(decision == "keep")["row_id"].str.strip_chars()
    if ids.is_null().any() or (ids == "").any():
        raise UsageError(f"protect file {path}: a row marked keep has no row_id",
                         hint="fill in the row_id of every row marked keep")
    return list(dict.fromkeys(ids.to_list()))


def register(sub: Any) -> None:
    """Add the ``review`` and ``diff`` commands to the CLI's subparsers."""
    p = sub.add_parser("review", help="write a run's removed rows to a CSV for a reviewer to mark")
    p.add_argument("--run", required=True, help="the run folder")
    p.add_argument("--out", default="review.csv", help="the CSV to write (default: review.csv)")
    p.add_argument("--overwrite", action="store_true", help="replace a review file curate wrote")
    p.set_defaults(func=cmd_review)
    p = sub.add_parser("diff", help="list the rows whose fate changed between two runs")
    p.add_argument("run_a")
    p.add_argument("run_b")
    p.add_argument("--json", action="store_true", help="print the changes as JSON on stdout")
    p.add_argument("--out", help="also write the changes to this CSV file")
    p.add_argument("--overwrite", action="store_true", help="replace an --out file curate wrote")
    p.set_defaults(func=cmd_diff)


def cmd_review(args: argparse.Namespace) -> int:
    """Handler of ``curate review``."""
    rows = write_review(args.run, args.out, overwrite=args.overwrite)
    print(f"wrote {rows} removed rows of {args.run} to {args.out}\n"
          "write keep in the decision column of rows that must stay (empty or remove: no "
          f"objection), then add to [input]: protect_file = \"{args.out}\"", file=sys.stderr)
    return 0


def fates(run: str | Path) -> pl.DataFrame:
    """What happened to each row of a run: ``row_id`` (as text), ``fate`` (kept or removed) and,
    for removed rows, the audit's ``stage``, ``method``, ``reason`` and ``detail``.

    Examples
    --------
    >>> import tempfile
    >>> from curate.api import run
    >>> folder = Path(tempfile.mkdtemp())
    >>> pl.DataFrame({"x": [0.0, 0.0, 1.0], "y": ["a", "a", "b"]}).write_csv(folder / "t.csv")
    >>> _ = run({"input": {"path": "t.csv", "label": "y"},
    ...          "stages": [{"method": "exact-duplicates"}]}, base=folder, out=folder / "run")
    >>> fates(folder / "run").select("row_id", "fate", "reason").sort("row_id").rows()
    [('0', 'kept', None), ('1', 'removed', 'exact-copy'), ('2', 'kept', None)]
    """
    folder = run_folder(run)
    kept = pl.read_parquet(folder / "kept.parquet", columns=["row_id"])
    audit = pl.read_parquet(folder / "audit.parquet",
                            columns=["row_id", "stage", "method", "reason", "detail"])
    kept = kept.select(pl.col("row_id").cast(pl.String), pl.lit("kept").alias("fate"),
                       *[pl.lit(None, dtype=pl.String).alias(c) for c in _WHY])
    audit = audit.select(pl.col("row_id").cast(pl.String), pl.lit("removed").alias("fate"),
                         *_WHY)
    return pl.concat([kept, audit], how="vertical")


_WHY = ("stage", "method", "reason", "detail")


CHANGES = ("kept -> removed", "removed -> kept", "other stage or reason")


@dataclass
class RunDiff:
    """Rows whose fate changed from run A to run B, with each run's reasons.

    ``changes`` has ``row_id``, ``change`` (one of :data:`CHANGES`) and, for
    each run, ``a_``/``b_`` ``fate``, ``stage``, ``method``, ``reason`` and
    ``detail``. Only ids present in both runs are compared.
    """

    run_a: Path
    run_b: Path
    changes: pl.DataFrame
    compared: int
    only_in_a: int
    only_in_b: int
    same_input: bool
    warning: str | None

    def to_json(self) -> dict[str, Any]:
        """The diff as JSON-ready data."""
        def side(row: dict[str, Any], p: str) -> dict[str, Any]:
            return {k: row[f"{p}_{k}"] for k in ("fate", *_WHY)}

        return {"run_a": str(self.run_a), "run_b": str(self.run_b),
                "same_input": self.same_input, "warning": self.warning,
                "rows_compared": self.compared, "only_in_a": self.only_in_a,
                "only_in_b": self.only_in_b, "changed": self.changes.height,
                "by_change": self.counts(),
                "changes": [{"row_id": r["row_id"], "change": r["change"], "a": side(r, "a"),
                             "b": side(r, "b")} for r in self.changes.iter_rows(named=True)]}

    def counts(self) -> dict[str, int]:
        """Number of changed rows per kind of change, in the order of :data:`CHANGES`."""
        found = self.changes["change"].to_list()
        return {c: found.count(c) for c in CHANGES if c in found}


def _sides(run: Path, prefix: str) -> pl.DataFrame:
    return fates(run).rename(lambda c: c if c == "row_id" else f"{prefix}_{c}")


def diff_runs(run_a: str | Path, run_b: str | Path) -> RunDiff:
    """Compare two run folders row by row.

    Runs over different inputs (``input_sha256`` in their summaries differs)
    are compared on the row ids they share, with a warning that says how many
    ids only one of them has; with no shared id at all that is an error.

    Examples
    --------
    >>> diff_runs("no/such/run", "no/such/run")
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: no/such/run is not a run folder (it has no kept.parquet)
      hint: give a folder that `curate run` wrote (its [output] folder or --out)
    """
    a, b = run_folder(run_a), run_folder(run_b)
    left, right = _sides(a, "a"), _sides(b, "b")
    both = left.join(right, on="row_id", how="inner", maintain_order="left")
    sha = [json.loads((f / "summary.json").read_text(encoding="utf-8")).get("input_sha256")
           for f in (a, b)]
    same = sha[0] == sha[1] and sha[0] is not None
    if not same and both.height == 0:
        raise UsageError(f"runs {a} and {b} read different inputs and share no row id",
                         hint="compare two runs over the same input (or one that keeps its ids)")
    warning = None if same else (
        f"the runs read different inputs (input_sha256 {str(sha[0])[:12]} in {a}, "
        f"{str(sha[1])[:12]} in {b}); comparing the {both.height} row ids both have "
        f"({left.height - both.height} only in A, {right.height - both.height} only in B)")
    moved = pl.col("a_fate") != pl.col("b_fate")
    other = (pl.col("a_stage") != pl.col("b_stage")) | (pl.col("a_reason") != pl.col("b_reason"))
    change = (pl.when(moved).then(pl.concat_str("a_fate", pl.lit(" -> "), "b_fate"))
              .when(other).then(pl.lit(CHANGES[2])).otherwise(None))
    changes = (both.with_columns(change.alias("change")).filter(pl.col("change").is_not_null())
               .sort(pl.col("row_id").cast(pl.Int64, strict=False), "row_id", nulls_last=True)
               .select("row_id", "change", pl.exclude("row_id", "change")))
    return RunDiff(a, b, changes, both.height, left.height - both.height,
                   right.height - both.height, same, warning)


def diff_text(diff: RunDiff) -> str:
    """The diff as a table for the terminal: one line per row, then each run's detail."""
    if diff.changes.height == 0:
        return f"no row changed fate from {diff.run_a} to {diff.run_b} ({diff.compared} compared)"
    counts = ", ".join(f"{n} {c}" for c, n in diff.counts().items())
    lines = [f"{diff.changes.height} of {diff.compared} rows changed fate from {diff.run_a} (A) "
             f"to {diff.run_b} (B): {counts}"]
    width = max(6, *(len(r) for r in diff.changes["row_id"]))
    lines.append(f"{'row_id':<{width}}  {'change':<21}  {'run A':<34}  run B")
    for r in diff.changes.iter_rows(named=True):
        a, b = (r[f"{p}_fate"] if r[f"{p}_fate"] == "kept"
                else f"{r[f'{p}_stage']} / {r[f'{p}_reason']}" for p in ("a", "b"))
        lines.append(f"{r['row_id']:<{width}}  {r['change']:<21}  {a:<34}  {b}")
        lines += [f"{'':<{width}}  {p.upper()}: {r[f'{p}_detail']}" for p in ("a", "b")
                  if r[f"{p}_fate"] == "removed"]
    return "\n".join(lines)


def cmd_diff(args: argparse.Namespace) -> int:
    """Handler of ``curate diff``."""
    out = _claim_csv(Path(args.out), args.overwrite, [Path(args.run_a), Path(args.run_b)],
                     ("row_id", "change")) if args.out else nullcontext()
    with out as claim:
        diff = diff_runs(args.run_a, args.run_b)
        if claim is not None:
            claim.write_file(diff.changes.write_csv, int(diff.changes.estimated_size()))
    if diff.warning:
        print(f"warning: {diff.warning}", file=sys.stderr)
    print(json.dumps(diff.to_json(), indent=2, default=str) if args.json else diff_text(diff))
    return 0
