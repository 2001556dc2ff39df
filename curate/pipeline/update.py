"""An update of a run in memory: the run's rows and the new rows, each stage brought up to date.

:func:`update_run` takes a run folder's state (:mod:`curate.pipeline.state`)
and new rows with the same columns, builds the input (the run's rows in their
order, then the new ones; :mod:`curate.pipeline.update_input`) in the run's
fitted space, and runs each stage as an update of the run's
(:mod:`curate.pipeline.update_loop`): only the work the new rows cause. Its
summary gains an ``update`` block that says per stage how many old rows were
judged again and why, and whether the result equals a full run. With
``refit`` it is a full run on old and new rows instead, the space refitted.
Nothing is written here (see :func:`curate.api.update`).
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np

from curate.cluster.session import cluster_session
from curate.io.read import file_sha256
from curate.pipeline.loop import execute
from curate.pipeline.prepare import prepare_frame
from curate.pipeline.records import Prepared, RunResult
from curate.pipeline.state import RunState, read_state
from curate.pipeline.update_input import (
    check_pipeline,
    check_prepared,
    combined_input,
    outside_fitted,
)
from curate.pipeline.update_loop import update_stages
from curate.settings import Spec

__all__ = ["CAUTION", "update_run"]

CAUTION = ("the space keeps the run's fitted scaling, VDM tables and weights: new rows are "
           "measured with them, also where they fall outside the fitted ranges; rerun with "
           "refit when the data drifts")


def update_run(spec: Spec, run: Path, new: Path, *, refit: bool = False,
               progress: Callable[[str], None] | None = None) -> RunResult:
    """The run in folder ``run`` with the rows of ``new`` added (nothing is written).

    ``spec`` must be the run's pipeline; its ``[input] path`` is not read.
    """
    started = time.perf_counter()
    state = read_state(run)
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
        with cluster_session(spec.cluster):
            result, reports = update_stages(prep, state, progress)
    result.summary["update"] = _facts(state, prep, spec, old_rows, reports, refit,
                                      time.perf_counter() - started)
    return result



def _facts(state: RunState, prep: Prepared, spec: Spec, old_rows: int,
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
