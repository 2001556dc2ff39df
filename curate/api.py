"""The Python entry point: run a pipeline, get polars frames back, and write the run folder."""

from __future__ import annotations

import json
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from curate.io.batches import batch_rows, write_rows
from curate.io.folder import write_run_folder
from curate.pipeline.loop import execute
from curate.pipeline.prepare import prepare
from curate.pipeline.records import RunResult
from curate.report.html import render_run
from curate.settings import Spec
from curate.spec import load_spec, spec_from_dict

__all__ = ["run", "write_result", "write_selection"]


def _as_spec(pipeline: str | Path | Mapping[str, Any] | Spec, base: str | Path) -> Spec:
    if isinstance(pipeline, Spec):
        return pipeline
    if isinstance(pipeline, Mapping):
        return spec_from_dict(pipeline, base=base)
    return load_spec(pipeline)


def run(pipeline: str | Path | Mapping[str, Any] | Spec, *, out: str | Path | None = None,
        overwrite: bool | None = None, write: bool = False, base: str | Path = ".",
        progress: Callable[[str], None] | None = None) -> RunResult:
    """Run a pipeline and return kept, removed and audit frames and the summary.

    ``pipeline`` is a pipeline file path, a dictionary shaped like one
    (paths relative to ``base``) or a checked :class:`~curate.settings.Spec`.
    Nothing is written unless ``write`` is true or ``out`` is given.

    Examples
    --------
    >>> import polars as pl, tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> pl.DataFrame({"x": [0.0, 0.1, 0.2, 5.0, 5.1, 5.1],
    ...               "y": ["a", "a", "a", "b", "b", "b"]}).write_csv(folder / "t.csv")
    >>> result = run({"input": {"path": "t.csv", "label": "y"},
    ...               "stages": [{"method": "exact-duplicates"}]}, base=folder)
    >>> result.summary["rows_removed"], result.audit["kept_as"].to_list()
    (1, [4])
    """
    spec = _as_spec(pipeline, base)
    result = execute(prepare(spec), progress=progress)
    if write or out is not None:
        folder = Path(out) if out is not None else spec.output.folder
        write_result(result, folder, spec.output.overwrite if overwrite is None else overwrite,
                     report=spec.output.report)
    return result


def write_result(result: RunResult, folder: Path, overwrite: bool, report: bool = True) -> None:
    """Write kept, removed, audit, summary and report into ``folder`` atomically.

    The files are those of :data:`curate.io.folder.RUN_FILES`. Kept and
    removed rows are streamed from the input in batches sized by ``[run]
    memory_mb`` (see :mod:`curate.io.batches`).
    """

    def fill(tmp: Path) -> None:
        write_selection(result, tmp)
        result.audit.write_parquet(tmp / "audit.parquet")
        if result.spared is not None:
            result.spared.write_parquet(tmp / "protected.parquet")
        (tmp / "summary.json").write_text(json.dumps(result.summary, indent=2, default=str) + "\n")
        if report:
            (tmp / "report.html").write_text(render_run(result), encoding="utf-8")

    write_run_folder(folder, overwrite, fill)


def write_selection(result: RunResult, folder: Path,
                    on_batch: Callable[[int], None] | None = None) -> None:
    """Write ``kept.parquet`` and ``removed.parquet`` into ``folder``, batch by batch.

    ``on_batch`` is called with the row count of every batch written.
    """
    frame = result.rows_frame()
    mask = result.kept_mask
    rows = batch_rows(frame, result.prepared.spec.run.engine.memory_mb)
    write_rows(frame, mask, folder / "kept.parquet", rows, on_batch)
    write_rows(frame, ~mask, folder / "removed.parquet", rows, on_batch)
