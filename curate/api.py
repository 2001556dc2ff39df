"""The Python entry point: run a pipeline, get polars frames back, and write the run folder."""

from __future__ import annotations

import json
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from curate.io.output_checks import spec_inputs
from curate.io.outputs import Claim, OutputFile, claim_output
from curate.pipeline.loop import execute
from curate.pipeline.prepare import prepare
from curate.pipeline.records import RunResult
from curate.report.html import render_run
from curate.settings import Spec
from curate.spec import load_spec, spec_from_dict

__all__ = ["run", "write_result"]


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
    Nothing is written unless ``write`` is true or ``out`` is given; then the
    output folder is checked and claimed before the work starts (see
    :mod:`curate.io.outputs`).

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
    if not write and out is None:
        return execute(prepare(spec), progress=progress)
    with claim_output(Path(out) if out is not None else spec.output.folder,
                      overwrite=spec.output.overwrite if overwrite is None else overwrite,
                      inputs=spec_inputs(spec)) as claim:
        result = execute(prepare(spec), progress=progress)
        write_result(result, claim, report=spec.output.report)
    return result


def write_result(result: RunResult, claim: Claim, report: bool = True) -> None:
    """Write kept, removed, audit, summary and report as the run folder ``claim`` holds.

    The files are those of :data:`curate.io.folder.RUN_FILES`, each with its
    size in memory (for the message of a full disk).
    """
    frames = [("kept.parquet", result.kept), ("removed.parquet", result.removed),
              ("audit.parquet", result.audit), ("protected.parquet", result.spared),
              ("flagged.parquet", result.flagged)]
    files = [OutputFile(name, frame.write_parquet, int(frame.estimated_size()))
             for name, frame in frames if frame is not None]
    files.append(OutputFile.text("summary.json",
                                 json.dumps(result.summary, indent=2, default=str) + "\n"))
    if report:
        files.append(OutputFile.text("report.html", render_run(result)))
    claim.write_folder(files, kind="run")
