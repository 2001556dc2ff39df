"""Keep a curated store up to date: add new rows to a run without recomputing everything.

``update(pipeline, run=DIR, new=FILE)`` takes a run folder and new rows with
the same columns and returns (and, with ``out``, writes) a run whose kept,
removed and audit tables cover old and new rows together. The space keeps the
run's fitted statistics; each stage does only the work the new rows cause
(:mod:`curate.update_stages`), and its ``summary.json`` says per stage how
many old rows were judged again and why, and whether the result equals a full
run. ``refit=True`` instead runs the pipeline in full on old and new rows,
refitting the space.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Mapping
from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np

from curate.api import _as_spec
from curate.pipeline import RunResult, execute, prepare_frame
from curate.runfolder import write_result
from curate.spec import Spec
from curate.table import file_sha256
from curate.update_input import check_pipeline, check_prepared, combined_input, outside_fitted
from curate.update_run import update_stages
from curate.update_state import RunState, read_state

__all__ = ["update"]

CAUTION = ("the space keeps the run's fitted scaling, VDM tables and weights: new rows are "
           "measured with them, also where they fall outside the fitted ranges; rerun with "
           "refit when the data drifts")


def update(pipeline: str | Path | Mapping[str, Any] | Spec, *, run: str | Path,
           new: str | Path, out: str | Path | None = None, overwrite: bool | None = None,
           refit: bool = False, write: bool = False, base: str | Path = ".",
           progress: Callable[[str], None] | None = None) -> RunResult:
    """Add the rows of ``new`` to the run folder ``run`` and return the updated run.

    ``pipeline`` is the run's pipeline (file, dictionary or checked settings;
    its ``[input] path`` is not read: the old rows come from the run folder).
    ``new`` is a CSV or Parquet file, a folder of them or a glob, with the
    run's columns and ids it does not have. Nothing is written unless ``write``
    is true or ``out`` is given; the folder is written all at once, as
    :func:`curate.run` writes it, and ``run`` itself is only read.

    Examples
    --------
    >>> import polars as pl, tempfile
    >>> from curate.api import run as run_pipeline
    >>> folder = Path(tempfile.mkdtemp())
    >>> pl.DataFrame({"x": [0.0, 0.1, 0.2, 5.0, 5.1, 5.2], "y": ["a", "a", "a", "b", "b", "b"]}
    ...              ).write_csv(folder / "t.csv")
    >>> pipe = {"input": {"path": "t.csv", "label": "y"},
    ...         "stages": [{"method": "exact-duplicates"}]}
    >>> _ = run_pipeline(pipe, base=folder, out=folder / "run1")
    >>> pl.DataFrame({"x": [5.1, 9.0], "y": ["b", "b"]}).write_csv(folder / "new.csv")
    >>> result = update(pipe, base=folder, run=folder / "run1", new=folder / "new.csv")
    >>> result.audit["row_id"].to_list(), result.summary["update"]["equals_full_run"]
    ([6], True)
    """
    started = time.perf_counter()
    spec = _as_spec(pipeline, base)
    state = read_state(Path(run))
    new_path = Path(new)
    if not refit:
        check_pipeline(state, spec)
    frame, old_rows = combined_input(state, new_path, spec)
    spec = replace(spec, input=replace(spec.input, path=new_path))
    fit = None if refit else np.concatenate([state.rows["fit"].to_numpy(),
                                             np.zeros(frame.height - old_rows, dtype=bool)])
    prep = prepare_frame(spec, frame, fit)
    if refit:
        result = execute(prep, progress)
        reports = [{"name": s.name, "method": s.method, "mode": "full run (refit)", "exact": True}
                   for s in spec.stages]
    else:
        check_prepared(state, prep, old_rows)
        from curate.distributed import cluster_session

        with cluster_session(spec.cluster):
            result, reports = update_stages(prep, state, progress)
    result.summary["update"] = _facts(state, prep, spec, old_rows, reports, refit,
                                      time.perf_counter() - started)
    if write or out is not None:
        folder = Path(out) if out is not None else spec.output.folder
        write_result(result, folder, spec.output.overwrite if overwrite is None else overwrite,
                     report=spec.output.report)
    return result


def _facts(state: RunState, prep: Any, spec: Spec, old_rows: int,
           reports: list[dict[str, Any]], refit: bool, seconds: float) -> dict[str, Any]:
    """The ``update`` block of summary.json: where from, what came, and how each stage went."""
    exact_engine = prep.space.engine.backend != "approximate"
    equal = exact_engine
    for report in reports:
        equal = equal and bool(report.pop("exact"))
        report["equals_full_run"] = equal
    facts: dict[str, Any] = {
        "from_run": str(state.folder), "from_run_input_sha256": state.state.get("input_sha256"),
        "new_rows": prep.frame.height - old_rows, "old_rows": old_rows,
        "new_input": str(spec.input.path), "new_input_sha256": file_sha256(spec.input.path),
        "refit": refit, "equals_full_run": equal, "stages": reports,
        "seconds": round(seconds, 4)}
    if not refit:
        facts.update(outside_fitted(state, prep, old_rows))
        facts["space"] = CAUTION
    if not exact_engine:
        facts["note"] = "the approximate neighbour engine may miss neighbours: no update or " \
                        "run with it is certain to equal another"
    return facts
