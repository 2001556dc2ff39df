"""The diff of two run folders: the rows whose fate changed, with each run's reasons.

``curate diff RUN_A RUN_B`` lists the rows kept in one run and removed in the
other, or removed by another stage or for another reason, with the audit's
words from each run.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import polars as pl

from curate.errors import UsageError, counted
from curate.io.folder import run_folder

__all__ = ["CHANGES", "RunDiff", "diff_runs", "fates"]


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


def diff_runs(run_a: str | Path, run_b: str | Path, *, force: bool = False) -> RunDiff:
    """Compare two run folders row by row.

    Runs over different inputs (``input_sha256`` in their summaries differs) are
    refused: the same id may name another row. With ``force`` they are compared
    on the row ids they share, with a warning that says how many ids only one of
    them has; with no shared id at all that is an error.

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
    inputs = (f"the runs read different inputs (input_sha256 {str(sha[0])[:12]} in {a}, "
              f"{str(sha[1])[:12]} in {b})")
    if not same and not force:
        raise UsageError(f"{inputs}: a row id may name another row in each",
                         hint=f"compare two runs over the same input, or add --force to compare "
                              f"the {counted(both.height, 'row id')} both have")
    warning = None if same else (
        f"{inputs}; comparing the {counted(both.height, 'row id')} both have "
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
