"""`curate why`: what happened to one row of a written run, in plain words.

Reads only ``audit.parquet``, ``kept.parquet`` and, where a label-noise stage
flagged rows it kept, ``flagged.parquet`` with polars, so the command starts
without the numeric libraries the run needed.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import polars as pl

from curate.errors import UsageError
from curate.io.outputs import settle

__all__ = ["explain"]


def _same_id(column: pl.Series, row_id: str) -> pl.Series:
    return column.cast(pl.String) == row_id


def _audit_record(path: Path, row_id: str) -> dict[str, Any] | None:
    """The audit row of ``row_id``, or None: the id column first, then only that row.

    Reading the whole audit of a million-row run (lists of neighbours in every
    row) took ten times longer than reading its ids and then one row.
    """
    hit = _same_id(pl.read_parquet(path, columns=["row_id"])["row_id"], row_id).arg_true()
    if hit.len() == 0:
        return None
    return pl.scan_parquet(path).slice(int(hit[0]), 1).collect().row(0, named=True)


def explain(run: Path, row_id: str) -> str:
    """Say in plain words what happened to ``row_id`` in the run folder ``run``."""
    run = Path(run)
    settle(run)
    audit_path = run / "audit.parquet"
    if not audit_path.exists():
        raise UsageError(f"{run} is not a run folder (no audit.parquet)",
                         hint="give the folder that `curate run` wrote, e.g. --run runs/latest")
    record = _audit_record(audit_path, row_id)
    if record is not None:
        return _removal_text(record)
    kept = pl.read_parquet(run / "kept.parquet", columns=["row_id"])
    if _same_id(kept["row_id"], row_id).any():
        flags = _flags(run, row_id)
        if flags:
            return f"row {row_id} was kept: no stage removed it.\n" + "\n".join(flags)
        return f"row {row_id} was kept: no stage removed it."
    raise UsageError(f"row {row_id} is not in the run {run}", hint=_id_hint(run, kept["row_id"]))


def _id_hint(run: Path, kept_ids: pl.Series) -> str:
    """What a row id of this run looks like: values of its id column, or input positions."""
    summary = run / "summary.json"
    id_column = json.loads(summary.read_text(encoding="utf-8")).get("id") \
        if summary.is_file() else None
    examples = ", ".join(str(v) for v in kept_ids.head(3).to_list())
    if id_column:
        return (f"this run's row ids are the values of the input's id column {id_column!r} "
                f"(kept rows include {examples}), not positions")
    return (f"this run's row ids are 0-based input positions (kept rows include {examples})")


def _flags(run: Path, row_id: str) -> list[str]:
    """What label-noise stages that keep the rows they flag said about this row."""
    path = run / "flagged.parquet"
    if not path.exists():
        return []
    flagged = pl.read_parquet(path)
    lines = []
    for rec in flagged.filter(_same_id(flagged["row_id"], row_id)).iter_rows(named=True):
        what = "value" if isinstance(rec["suggested_label"], float) else "label"
        said = (f"suggests the {what}" if rec["action"] == "relabel" else
                f"reported it, suggesting the {what}")
        lines.append(f"  stage {rec['stage']!r} ({rec['method']}) {said} "
                     f"{_written(rec['suggested_label'])} instead of {_written(rec['label'])}, "
                     f"reason {rec['reason']!r}:")
        lines.append(f"    {rec['detail']}")
    return lines


def _written(value: Any) -> str:
    """A label as quoted text, a target value as a number of six significant digits.

    Examples
    --------
    >>> _written("seal-leak"), _written(13.846153846), _written(7)
    ("'seal-leak'", '13.8462', '7')
    """
    return f"{value:.6g}" if isinstance(value, float) else \
        str(value) if isinstance(value, int) else repr(value)


def _removal_text(rec: dict[str, Any]) -> str:
    lines = [f"row {rec['row_id']} (label {rec['label']!r}) was removed by stage {rec['stage']!r} "
             f"({rec['method']}), reason {rec['reason']!r}" +
             (f", step {rec['step']}" if rec["step"] and rec["step"] > 1 else "") + ".",
             f"  {rec['detail']}"]
    if rec["kept_as"] is not None:
        lines.append(f"  the kept row standing for it: {rec['kept_as']}")
    if rec.get("suggested_label") is not None:
        what = "value" if isinstance(rec["suggested_label"], float) else "label"
        lines.append(f"  the {what} the stage suggests for it: {_written(rec['suggested_label'])}")
    neighbours = list(zip(rec["neighbour_ids"], rec["neighbour_labels"], rec["neighbour_distances"],
                          strict=True))
    if neighbours:
        lines.append("  evidence (row id, label, distance):")
        lines.extend(f"    {nid}  {lab!r}  {dist:.4g}" for nid, lab, dist in neighbours)
    return "\n".join(lines)
