"""`curate why`: what happened to one row of a written run, in plain words.

Reads only ``audit.parquet``, ``kept.parquet`` and, where a label-noise stage
flagged rows it kept, ``flagged.parquet`` with polars, so the command starts
without the numeric libraries the run needed.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import polars as pl

from curate.errors import UsageError
from curate.io.outputs import settle

__all__ = ["explain"]


def _same_id(column: pl.Series, row_id: str) -> pl.Series:
    return column.cast(pl.String) == row_id


def explain(run: Path, row_id: str) -> str:
    """Say in plain words what happened to ``row_id`` in the run folder ``run``."""
    run = Path(run)
    settle(run)
    audit_path = run / "audit.parquet"
    if not audit_path.exists():
        raise UsageError(f"{run} is not a run folder (no audit.parquet)",
                         hint="give the folder that `curate run` wrote, e.g. --run runs/latest")
    audit = pl.read_parquet(audit_path)
    hit = audit.filter(_same_id(audit["row_id"], row_id))
    if hit.height:
        return _removal_text(hit.row(0, named=True))
    kept = pl.read_parquet(run / "kept.parquet", columns=["row_id"])
    if _same_id(kept["row_id"], row_id).any():
        flags = _flags(run, row_id)
        if flags:
            return f"row {row_id} was kept: no stage removed it.\n" + "\n".join(flags)
        return f"row {row_id} was kept: no stage removed it."
    raise UsageError(f"row {row_id} is not in the run {run}",
                     hint="give a row id from the input (the id column, or the 0-based position)")


def _flags(run: Path, row_id: str) -> list[str]:
    """What label-noise stages that keep the rows they flag said about this row."""
    path = run / "flagged.parquet"
    if not path.exists():
        return []
    flagged = pl.read_parquet(path)
    lines = []
    for rec in flagged.filter(_same_id(flagged["row_id"], row_id)).iter_rows(named=True):
        said = ("suggests the label" if rec["action"] == "relabel" else
                "reported it, suggesting the label")
        lines.append(f"  stage {rec['stage']!r} ({rec['method']}) {said} "
                     f"{rec['suggested_label']!r} instead of {rec['label']!r}, reason "
                     f"{rec['reason']!r}:")
        lines.append(f"    {rec['detail']}")
    return lines


def _removal_text(rec: dict[str, Any]) -> str:
    lines = [f"row {rec['row_id']} (label {rec['label']!r}) was removed by stage {rec['stage']!r} "
             f"({rec['method']}), reason {rec['reason']!r}" +
             (f", step {rec['step']}" if rec["step"] and rec["step"] > 1 else "") + ".",
             f"  {rec['detail']}"]
    if rec["kept_as"] is not None:
        lines.append(f"  the kept row standing for it: {rec['kept_as']}")
    if rec.get("suggested_label") is not None:
        lines.append(f"  the label the stage suggests for it: {rec['suggested_label']!r}")
    neighbours = list(zip(rec["neighbour_ids"], rec["neighbour_labels"], rec["neighbour_distances"],
                          strict=True))
    if neighbours:
        lines.append("  evidence (row id, label, distance):")
        lines.extend(f"    {nid}  {lab!r}  {dist:.4g}" for nid, lab, dist in neighbours)
    return "\n".join(lines)
