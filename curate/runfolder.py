"""The files of a run folder, written all at once or not at all."""

from __future__ import annotations

import json
from typing import TYPE_CHECKING

from curate.outputs import Claim, OutputFile

if TYPE_CHECKING:
    from curate.pipeline import RunResult

__all__ = ["RUN_FILES", "run_files", "write_result"]

RUN_FILES = ("kept.parquet", "removed.parquet", "audit.parquet", "summary.json", "report.html",
             "protected.parquet")


def run_files(result: RunResult, report: bool = True) -> list[OutputFile]:
    """Kept, removed, audit, protected, summary and report, each with its size in memory."""
    from curate.report import render_run

    frames = [("kept.parquet", result.kept), ("removed.parquet", result.removed),
              ("audit.parquet", result.audit), ("protected.parquet", result.spared)]
    files = [OutputFile(name, frame.write_parquet, int(frame.estimated_size()))
             for name, frame in frames if frame is not None]
    texts = [("summary.json", json.dumps(result.summary, indent=2, default=str) + "\n")]
    if report:
        texts.append(("report.html", render_run(result)))
    return files + [OutputFile.text(name, text) for name, text in texts]


def write_result(result: RunResult, claim: Claim, report: bool = True) -> None:
    """Write :func:`run_files` as the run folder that ``claim`` holds."""
    claim.write_folder(run_files(result, report), kind="run")
