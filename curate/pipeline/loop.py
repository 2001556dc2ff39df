"""The stage loop: run the stages in order on the rows still kept and assemble the result.

Every stage goes through :func:`curate.pipeline.stage.run_step`; this module maps
its selection to input rows, appends audit records, keeps the partition
invariant and builds kept, removed, audit and summary. Nothing is written here
(see :func:`curate.api.run`).
"""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any

import numpy as np
import polars as pl

from curate.cluster.session import cluster_session
from curate.errors import UsageError, counted
from curate.methods import method_for
from curate.methods.base import Selection
from curate.neighbours.backends import choose_backend
from curate.neighbours.lists import sharing_lists
from curate.pipeline.audit import AuditLog
from curate.pipeline.records import SUGGESTED, Prepared, RunResult, StageOutcome
from curate.pipeline.stage import check_folds, check_k, removable_rows, run_stage, run_step
from curate.pipeline.summary import build_summary, doubt_summary
from curate.settings import StageSettings
from curate.space.points import Space

__all__ = ["SUGGESTED", "check_relabel_column", "check_stages", "execute", "noise_outputs",
           "record_flags"]


def check_stages(prep: Prepared) -> None:
    """Check every stage's parameters against the rows that the first stage would get."""
    task = prep.task.task
    for stage in prep.spec.stages:
        removable = removable_rows(stage, prep.space_labels, prep.protected, task)
        if method_for(stage.method, task).uses_neighbours:
            check_k(stage, prep.space_labels, removable, task)
        check_folds(stage, prep.space_labels, task)


def _quarantine(prep: Prepared, audit: AuditLog) -> None:
    failures = prep.failures
    if failures.height == 0:
        return
    first = failures.group_by("position", maintain_order=True).agg(
        pl.col("column").first(), pl.col("check").first(), pl.col("value").first(), pl.len())
    first = first.sort("position")
    details = [f"failed check {check} on column {column!r} (value {value!r})"
               + (f" and {counted(n - 1, 'more check')}" if n > 1 else "")
               for _, column, check, value, n in first.iter_rows()]
    pos = first["position"].to_numpy().astype(np.int64)
    audit.add(stage="schema", method="schema", positions=pos, reason=["schema"] * len(pos),
              detail=details, neighbours=[np.zeros(0, np.int64)] * len(pos),
              distances=[np.zeros(0)] * len(pos), kept_as=np.full(len(pos), -1), step=np.zeros(len(pos)))


def _record(prep: Prepared, audit: AuditLog, stage: StageSettings, active: np.ndarray,
            sel: Selection, only: np.ndarray | None = None,
            suggested: np.ndarray | None = None) -> np.ndarray:
    """Map a selection to input positions and append its audit records; return removed positions.

    ``only`` limits the records to those local positions (for rows a stage was kept from removing);
    ``suggested`` holds a label per local position that a label-noise method suggests.
    """
    to_input = prep.valid_positions[active]
    pick = np.arange(len(sel.removed)) if only is None else np.flatnonzero(np.isin(sel.removed, only))
    removed = to_input[sel.removed[pick]]
    audit.add(stage=stage.name, method=stage.method, positions=removed,
              reason=[sel.reason[i] for i in pick], detail=[sel.detail[i] for i in pick],
              neighbours=[to_input[sel.neighbours[i]] for i in pick],
              distances=[sel.distances[i] for i in pick],
              kept_as=np.where(sel.kept_as[pick] >= 0, to_input[np.maximum(sel.kept_as[pick], 0)], -1),
              step=sel.step[pick],
              suggested=None if suggested is None else suggested[sel.removed[pick]])
    return removed


def record_flags(prep: Prepared, flags: AuditLog, actions: list[str], relabel: np.ndarray,
                  stage: StageSettings, active: np.ndarray, sel: Selection) -> None:
    """Record the rows a label-noise stage flagged but kept, and its suggested labels for the
    kept rows when it relabels (the input's label column itself is never changed)."""
    if sel.flagged is None or sel.suggested is None:
        return
    flagged = _record(prep, flags, stage, active, sel.flagged, suggested=sel.suggested)
    actions.extend([sel.action] * len(flagged))
    if sel.action == "relabel":
        relabel[flagged] = sel.suggested[sel.flagged.removed]


def _spared(prep: Prepared, spared: AuditLog, stage: StageSettings, active: np.ndarray,
            sub: Space, labels: np.ndarray, protected: np.ndarray) -> int:
    """Record which protected rows the stage would have removed, had they not been protected."""
    if len(protected) == 0:
        return 0
    free = run_stage(stage, sub, labels, np.zeros(0, dtype=np.int64), prep.spec.run.seed,
                     prep.task.task)
    return len(_record(prep, spared, stage, active, free, only=protected))


def execute(prep: Prepared, progress: Callable[[str], None] | None = None) -> RunResult:
    """Run every stage on the rows still kept and assemble the result (nothing is written).

    With a ``[cluster]`` address the stages run inside one Dask session that
    closes when they end (see :mod:`curate.cluster.session`).
    """
    with cluster_session(prep.spec.cluster):
        return _execute(prep, progress)


def _execute(prep: Prepared, progress: Callable[[str], None] | None) -> RunResult:
    say = progress or (lambda _msg: None)
    say(f"task: {prep.task.task} ({prep.task.reason})")
    started = time.perf_counter()
    labels = prep.space_labels
    audit = AuditLog(prep.ids, prep.labels)
    spared = AuditLog(prep.ids, prep.labels)
    flags = AuditLog(prep.ids, prep.labels)
    actions: list[str] = []
    relabel = np.full(prep.frame.height, None, dtype=object)
    check_relabel_column(prep)
    _quarantine(prep, audit)
    active = np.arange(prep.space.n)
    ids_valid = prep.ids.gather(prep.valid_positions).to_list()
    outcomes: list[StageOutcome] = []
    scores: dict[str, np.ndarray] = {}
    for number, stage in enumerate(prep.spec.stages, start=1):
        say(f"stage {number}/{len(prep.spec.stages)} {stage.name!r} ({stage.method}) "
            f"on {counted(len(active), 'row')}")
        t0 = time.perf_counter()
        sub = prep.space.subset(active)
        stage_labels = labels[active]
        protected = np.flatnonzero(np.isin(active, prep.protected))
        # one neighbour more than the vote: the tie notes of its records need no search
        info = method_for(stage.method, prep.task.task)
        wider = info.judged_by_lists and sub.engine.backend != "approximate"
        with sharing_lists(sub.matrix, widen=1 if wider else 0) as lists:
            step = run_step(stage, sub, stage_labels, protected, prep.spec.run.seed,
                            [ids_valid[a] for a in active], prep.task.task)
            if step.over_limit is not None:
                raise step.over_limit
            sel = step.selection
            # the lists the stage searched serve its run without protection too
            spared_count = _spared(prep, spared, stage, active, sub, stage_labels, protected)
        removed_input = _record(prep, audit, stage, active, sel, suggested=sel.suggested)
        record_flags(prep, flags, actions, relabel, stage, active, sel)
        sel.info["protected_spared"] = spared_count
        for name, values in sel.scores.items():
            full = scores.setdefault(name, np.full(prep.frame.height, np.nan))
            full[prep.valid_positions[active]] = values
        outcomes.append(StageOutcome(stage, len(active), stage_labels, sel, removed_input,
                                     time.perf_counter() - t0, prep.valid_positions[active],
                                     lists.pair() if info.judged_by_lists
                                     else None))
        active = active[sel.kept]
        say(f"  removed {counted(len(sel.removed), 'row')} in {outcomes[-1].seconds:.2f} s")
    kept_positions = prep.valid_positions[active]
    table = audit.frame()
    _check_outputs(prep, kept_positions, table)
    summary = build_summary(prep, outcomes, kept_positions, table, time.perf_counter() - started)
    summary["engine"].update(_engine_facts(prep, outcomes))
    flagged, suggestions = noise_outputs(prep, flags, actions, relabel, scores, summary)
    return RunResult(table, summary, prep, kept_positions, scores,
                     spared.frame(unique_ids=False) if len(prep.protected) else None,
                     flagged, suggestions, outcomes)


def noise_outputs(prep: Prepared, flags: AuditLog, actions: list[str], relabel: np.ndarray,
                  scores: dict[str, np.ndarray], summary: dict[str, Any]
                  ) -> tuple[pl.DataFrame | None, np.ndarray | None]:
    """What label-noise stages add to a result: the flagged-but-kept records (None when no
    stage keeps what it flags), the suggested labels (None when no stage relabels), and the
    summary's count of flagged rows and spread of the doubt score."""
    flagged = flags.frame(unique_ids=False).with_columns(pl.Series("action", actions,
                                                                   dtype=pl.String))
    summary["rows_flagged_kept"] = flagged.height
    if "doubt" in scores:
        summary["doubt"] = doubt_summary(scores["doubt"], prep.task.task)
    keeps = any(s.params.get("action") in ("relabel", "report") for s in prep.spec.stages)
    return (flagged if keeps else None), (relabel if _relabels(prep) else None)


def _relabels(prep: Prepared) -> bool:
    return any(s.params.get("action") == "relabel" for s in prep.spec.stages)


def check_relabel_column(prep: Prepared) -> None:
    """Stop before any stage runs when a relabelling stage's column is already an input
    column."""
    if _relabels(prep) and SUGGESTED in prep.frame.columns:
        raise UsageError(f"{prep.spec.input.path}: the input already has a column {SUGGESTED!r}, "
                         "where a stage with action = \"relabel\" writes its suggestions",
                         hint="rename that input column, or use action = \"report\"")


def _engine_facts(prep: Prepared, outcomes: list[StageOutcome]) -> dict[str, Any]:
    """Which neighbour backend the run's space gets and, for the approximate one, its recall.

    The recall is the lowest that any stage's approximate query measured for
    itself (on a seeded sample of its queries against the exact engine), so it
    describes the neighbours the stages actually used; nothing is searched again.
    """
    if not any(method_for(s.method, prep.task.task).uses_neighbours for s in prep.spec.stages):
        return {}
    backend, reason = choose_backend(prep.space)
    engines = [o.selection.info["engine"] for o in outcomes if "engine" in o.selection.info]
    approx = [e for e in engines if not e["exact"]]
    if approx:
        worst = min(approx, key=lambda e: e["recall"])
        return {"backend": "approximate", "reason": reason, "exact": False,
                "recall": worst["recall"], "recall_sample": sum(e["recall_sample"] for e in approx),
                "recall_target": prep.space.engine.recall_target}
    if backend == "approximate":
        backend, reason = "fast", ("approximate asked for, but every neighbour was found "
                                   "exactly: radius queries, or blocks on a cluster")
    return {"backend": backend, "reason": reason, "exact": True, "recall": 1.0,
            "recall_sample": 0}


def _check_outputs(prep: Prepared, kept_positions: np.ndarray, audit: pl.DataFrame) -> None:
    """The contract, checked before anything is written: kept and audited rows partition the input."""
    mask = np.zeros(prep.frame.height, dtype=bool)
    mask[kept_positions] = True
    if int(mask.sum()) != len(kept_positions):
        raise AssertionError("a row is kept twice")
    removed = prep.ids.filter(pl.Series(~mask))
    if audit.height != removed.len() or not audit["row_id"].sort().equals(removed.sort()):
        raise AssertionError("the audit does not have exactly one row per removed row")
