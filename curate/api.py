"""The Python entry points: run a pipeline or update a run, get polars frames back, and
write the run folder."""

from __future__ import annotations

import functools
import json
import time
from collections.abc import Callable, Iterable, Mapping
from pathlib import Path
from typing import Any

from curate.io.batches import batch_rows, write_rows
from curate.io.output_checks import spec_inputs
from curate.io.outputs import Claim, OutputFile, claim_output
from curate.pipeline.loop import execute
from curate.pipeline.prepare import prepare
from curate.pipeline.records import RunResult
from curate.pipeline.state import STATE_DIR, state_size, write_state
from curate.pipeline.update import update_run
from curate.report.html import render_run
from curate.settings import Spec
from curate.spec import load_spec, spec_from_dict

__all__ = ["run", "selection_files", "update", "write_result"]


def _as_spec(pipeline: str | Path | Mapping[str, Any] | Spec, base: str | Path,
             trust_code: Iterable[str | Path] = ()) -> Spec:
    if isinstance(pipeline, Spec):
        return pipeline
    if isinstance(pipeline, Mapping):
        return spec_from_dict(pipeline, base=base, trust_code=trust_code)
    return load_spec(pipeline, trust_code=trust_code)


def run(pipeline: str | Path | Mapping[str, Any] | Spec, *, out: str | Path | None = None,
        overwrite: bool | None = None, write: bool = False, base: str | Path = ".",
        progress: Callable[[str], None] | None = None, started: float | None = None,
        trust_code: Iterable[str | Path] = ()) -> RunResult:
    """Run a pipeline and return kept, removed and audit frames and the summary.

    ``pipeline`` is a pipeline file path, a dictionary shaped like one
    (paths relative to ``base``) or a checked :class:`~curate.settings.Spec`.
    Nothing is written unless ``write`` is true or ``out`` is given; then the
    output folder is checked and claimed before the work starts (see
    :mod:`curate.io.outputs`).

    The summary's ``seconds`` times the stages; ``total_seconds`` the whole
    run from ``started`` (a :func:`time.perf_counter` value, such as the
    start of a command; default: this call) until the result is ready or,
    when writing, until the kept, removed and audit tables are written.
    A schema module loads only from the pipeline file's folder (``base`` for
    a dictionary) or from the folders and modules named in ``trust_code``.

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
    started = time.perf_counter() if started is None else started
    spec = _as_spec(pipeline, base, trust_code)
    if not write and out is None:
        result = execute(prepare(spec), progress=progress)
        result.summary["total_seconds"] = round(time.perf_counter() - started, 4)
        return result
    with claim_output(Path(out) if out is not None else spec.output.folder,
                      overwrite=spec.output.overwrite if overwrite is None else overwrite,
                      inputs=spec_inputs(spec)) as claim:
        result = execute(prepare(spec), progress=progress)
        write_result(result, claim, report=spec.output.report, started=started)
    return result


def update(pipeline: str | Path | Mapping[str, Any] | Spec, *, run: str | Path,
           new: str | Path, out: str | Path | None = None, overwrite: bool | None = None,
           refit: bool = False, write: bool = False, base: str | Path = ".",
           progress: Callable[[str], None] | None = None, started: float | None = None,
           trust_code: Iterable[str | Path] = ()) -> RunResult:
    """Add the rows of ``new`` to the run folder ``run`` and return the updated run.

    ``pipeline`` is the run's pipeline (file, dictionary or checked settings;
    its ``[input] path`` is not read: the old rows come from the run folder).
    ``new`` is a CSV or Parquet file, a folder of them or a glob, with the
    run's columns and ids it does not have. Nothing is written unless ``write``
    is true or ``out`` is given; the output is claimed before the work starts and
    written all at once, as :func:`curate.run` writes it. ``run`` itself is only
    read, and the output may not be it (nor sit inside it, or hold it).

    Examples
    --------
    >>> import polars as pl, tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> pl.DataFrame({"x": [0.0, 0.1, 0.2, 5.0, 5.1, 5.2], "y": ["a", "a", "a", "b", "b", "b"]}
    ...              ).write_csv(folder / "t.csv")
    >>> pipe = {"input": {"path": "t.csv", "label": "y"},
    ...         "stages": [{"method": "exact-duplicates"}]}
    >>> _ = run(pipe, base=folder, out=folder / "run1")
    >>> pl.DataFrame({"x": [5.1, 9.0], "y": ["b", "b"]}).write_csv(folder / "new.csv")
    >>> result = update(pipe, base=folder, run=folder / "run1", new=folder / "new.csv")
    >>> result.audit["row_id"].to_list(), result.summary["update"]["equals_full_run"]
    ([6], True)
    """
    started = time.perf_counter() if started is None else started
    spec = _as_spec(pipeline, base, trust_code)
    if not write and out is None:
        result = update_run(spec, Path(run), Path(new), refit=refit, progress=progress)
        result.summary["total_seconds"] = round(time.perf_counter() - started, 4)
        return result
    inputs = [*spec_inputs(spec), ("the run folder", Path(run)), ("the new rows", Path(new))]
    with claim_output(Path(out) if out is not None else spec.output.folder,
                      overwrite=spec.output.overwrite if overwrite is None else overwrite,
                      inputs=inputs) as claim:
        result = update_run(spec, Path(run), Path(new), refit=refit, progress=progress)
        write_result(result, claim, report=spec.output.report, started=started)
    return result


def write_result(result: RunResult, claim: Claim, report: bool = True,
                 started: float | None = None) -> None:
    """Write kept, removed, audit, summary and report as the run folder ``claim`` holds.

    The files are those of :data:`curate.io.folder.RUN_FILES`, each with its
    size in memory (for the message of a full disk), and the folder ``update/``
    that a later :func:`update` starts from (:mod:`curate.pipeline.state`). Kept
    and removed rows are streamed from the input in batches sized by
    ``[run] memory_mb`` (see :mod:`curate.io.batches`). With ``started``, the summary's
    ``total_seconds`` is measured once the tables are ready to write.
    """
    if started is not None:
        result.summary["total_seconds"] = round(time.perf_counter() - started, 4)
    files = selection_files(result)
    files += [OutputFile(name, frame.write_parquet, int(frame.estimated_size()))
              for name, frame in (("audit.parquet", result.audit),
                                  ("protected.parquet", result.spared),
                                  ("flagged.parquet", result.flagged)) if frame is not None]
    files.append(OutputFile.text("summary.json",
                                 json.dumps(result.summary, indent=2, default=str) + "\n"))
    if report:
        files.append(OutputFile.text("report.html", render_run(result)))
    files.append(OutputFile(STATE_DIR, functools.partial(write_state, result),
                            state_size(result)))
    claim.write_folder(files, kind="run")


def selection_files(result: RunResult,
                    on_batch: Callable[[int], None] | None = None) -> list[OutputFile]:
    """``kept.parquet`` and ``removed.parquet``, each written from the input batch by batch.

    ``on_batch`` is called with the row count of every batch written.
    """
    frame = result.rows_frame()
    mask = result.kept_mask
    rows = batch_rows(frame, result.prepared.spec.run.engine.memory_mb)
    per_row = int(frame.estimated_size()) // max(1, frame.height)
    kept = int(mask.sum())
    return [OutputFile("kept.parquet", functools.partial(write_rows, frame, mask, rows=rows,
                                                         on_batch=on_batch), per_row * kept),
            OutputFile("removed.parquet", functools.partial(write_rows, frame, ~mask, rows=rows,
                                                            on_batch=on_batch),
                       per_row * (frame.height - kept))]
