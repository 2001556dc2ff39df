"""Writing a run's result as a run folder, all at once or not at all."""

from __future__ import annotations

import json
from pathlib import Path
from typing import TYPE_CHECKING

from curate.table import write_run_folder
from curate.update_state import write_state

if TYPE_CHECKING:
    from curate.pipeline import RunResult

__all__ = ["RUN_FILES", "write_result"]

RUN_FILES = ("kept.parquet", "removed.parquet", "audit.parquet", "summary.json", "report.html",
             "protected.parquet")


def write_result(result: RunResult, folder: Path, overwrite: bool, report: bool = True) -> None:
    """Write kept, removed, audit, summary, report and update state into ``folder`` atomically."""
    from curate.report import render_run

    def fill(tmp: Path) -> None:
        result.kept.write_parquet(tmp / "kept.parquet")
        result.removed.write_parquet(tmp / "removed.parquet")
        result.audit.write_parquet(tmp / "audit.parquet")
        if result.spared is not None:
            result.spared.write_parquet(tmp / "protected.parquet")
        (tmp / "summary.json").write_text(json.dumps(result.summary, indent=2, default=str) + "\n")
        if report:
            (tmp / "report.html").write_text(render_run(result), encoding="utf-8")
        write_state(result, tmp)

    write_run_folder(folder, overwrite, fill)
