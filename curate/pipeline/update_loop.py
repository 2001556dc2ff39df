"""The stage loop of an update: each stage of the run brought up to date, in order.

It keeps the same contract as a full run (see :mod:`curate.pipeline.loop`): kept
and removed rows partition the input, the audit has one record per removed
row, the per-class safety limit is checked on every stage's whole result,
and nothing is written until everything is assembled. A stage's records are
new where the update judged rows again and copied from the run's audit where
it did not; both are in input terms, so the audit reads the same either way.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
import polars as pl

from curate.methods.base import Selection
from curate.neighbours.calls import recording, summarise_calls
from curate.neighbours.lists import sharing_lists
from curate.pipeline.audit import AUDIT_COLUMNS, AuditLog, audit_schema
from curate.pipeline.loop import (
    _check_outputs,
    _engine_facts,
    _quarantine,
    _record,
    _spared,
    check_relabel_column,
    noise_outputs,
    record_flags,
)
from curate.pipeline.records import Prepared, RunResult, StageOutcome
from curate.pipeline.stage import selection_breach
from curate.pipeline.state import RunState
from curate.pipeline.summary import build_summary
from curate.pipeline.update_records import Listed, OldStage, StageInput, StageUpdate, among
from curate.pipeline.update_stage import update_stage

__all__ = ["old_stages", "update_stages"]


@dataclass
class _Noise:
    """What label-noise stages flag but keep, as the run loop collects it."""

    flags: AuditLog
    actions: list[str]
    relabel: np.ndarray


def _positions(state: RunState) -> pl.DataFrame:
    return state.rows.select("row_id").with_row_index("position").with_columns(
        pl.col("position").cast(pl.Int64))


def old_stages(state: RunState, prep: Prepared) -> list[OldStage]:
    """What each stage of the run did, in input positions (old rows keep theirs)."""
    where = _positions(state)
    # join a slim frame: the audit's list columns need not travel through the joins
    slim = state.audit.select("row_id", "kept_as").join(where, on="row_id", how="left",
                                                         maintain_order="left").join(
        where.rename({"row_id": "kept_as", "position": "kept_position"}), on="kept_as",
        how="left", maintain_order="left")
    records = state.audit.with_columns(slim["position"], slim["kept_position"])
    protected_ids = pl.Series(state.state.get("protected", []), dtype=where["row_id"].dtype)
    protected = where.filter(pl.col("row_id").is_in(protected_ids.implode()))["position"] \
        .to_numpy()
    rows = np.flatnonzero(state.rows["valid"].to_numpy())
    out: list[OldStage] = []
    for number, facts in enumerate(state.state["stages"]):
        name = state.state["settings"]["stages"][number]["name"]
        mine = records.filter(pl.col("stage") == name)
        removed = np.sort(mine["position"].to_numpy())
        lists = None
        if facts.get("lists"):
            assert np.array_equal(state.lists[f"s{number}_rows"], rows)
            lists = (state.lists[f"s{number}_dist"], state.lists[f"s{number}_nbr"])
        out.append(OldStage(rows, removed, mine, lists, dict(facts.get("info", {})),
                            protected[among(protected, rows)],
                            facts.get("metric", prep.space.metric)))
        rows = rows[~among(rows, removed)]
    return out


def _records_at(records: pl.DataFrame, positions: np.ndarray) -> pl.DataFrame:
    """The old records of the rows at these input positions."""
    return records.filter(pl.col("position").is_in(pl.Series(positions).implode()))


def _summary_selection(upd: StageUpdate, inp: StageInput) -> Selection:
    """The stage's whole result for the summary: new and copied removals together."""
    copied = _records_at(inp.old.records, upd.copied)
    local = np.searchsorted(inp.rows, copied["position"].to_numpy())
    removed = np.concatenate([upd.selection.removed, local]).astype(np.int64)
    reasons = list(upd.selection.reason) + copied["reason"].to_list()
    return Selection(kept=upd.kept, removed=removed, reason=reasons, detail=[], neighbours=[],
                     distances=[], kept_as=np.zeros(0, dtype=np.int64),
                     step=np.zeros(0, dtype=np.int64), info=dict(upd.selection.info),
                     scores=upd.scores, groups=upd.selection.groups,
                     flagged=upd.selection.flagged, suggested=upd.selection.suggested,
                     action=upd.selection.action)


def _check_partition(upd: StageUpdate, inp: StageInput) -> np.ndarray:
    """The stage's removed positions; kept, new and copied removals must partition its rows."""
    copied = np.searchsorted(inp.rows, upd.copied)
    together = np.concatenate([upd.kept, upd.selection.removed, copied])
    if len(together) != len(inp.active) or not np.array_equal(np.sort(together),
                                                               np.arange(len(inp.active))):
        raise AssertionError(f"stage {inp.stage.name!r}: kept and removed rows do not partition "
                             "its input")
    return np.sort(np.concatenate([upd.selection.removed, copied]))


def _audit(prep: Prepared, builder: AuditLog, copied: list[pl.DataFrame],
           order: dict[str, int]) -> pl.DataFrame:
    """New and copied records in one table, by stage, then input position."""
    parts = [builder.frame()] + [c.select(AUDIT_COLUMNS) for c in copied]
    table = pl.concat(parts, how="vertical")
    where = pl.DataFrame({"row_id": prep.ids, "__position": np.arange(prep.frame.height)})
    table = table.join(where, on="row_id", how="left").with_columns(
        pl.col("stage").replace_strict(order, default=-1, return_dtype=pl.Int64)
        .alias("__stage")).sort(["__stage", "__position"]).select(AUDIT_COLUMNS)
    return audit_schema().validate(table)


def update_stages(prep: Prepared, state: RunState,
                  progress: Callable[[str], None] | None = None
                  ) -> tuple[RunResult, list[dict[str, Any]]]:
    """Run every stage of ``prep.spec`` as an update of the run ``state``."""
    say = progress or (lambda _msg: None)
    started = time.perf_counter()
    audit, spared = AuditLog(prep.ids, prep.labels), AuditLog(prep.ids, prep.labels)
    noise = _Noise(AuditLog(prep.ids, prep.labels), [],
                   np.full(prep.frame.height, None, dtype=object))
    check_relabel_column(prep)
    _quarantine(prep, audit)
    active = np.arange(prep.space.n)
    ids_valid = prep.ids.gather(prep.valid_positions).to_list()
    outcomes: list[StageOutcome] = []
    reports: list[dict[str, Any]] = []
    copied: list[pl.DataFrame] = []
    scores: dict[str, np.ndarray] = {}
    earlier: Listed | None = None
    for number, (stage, old) in enumerate(zip(prep.spec.stages, old_stages(state, prep),
                                              strict=True), start=1):
        say(f"stage {number}/{len(prep.spec.stages)} {stage.name!r} ({stage.method}) "
            f"on {len(active)} rows")
        t0 = time.perf_counter()
        seed = stage.seed if stage.seed is not None else prep.spec.run.seed
        inp = StageInput(prep, stage, active, old, seed, earlier)
        with recording() as calls:
            upd = update_stage(inp)
        if calls:
            upd.selection.info["engine"] = summarise_calls(calls)
        removed = _check_partition(upd, inp)
        sel = upd.selection
        breach = selection_breach(stage, inp.labels, sel, removed,
                                  [ids_valid[a] for a in active], prep.task.task)
        if breach is not None:
            raise breach
        _record(prep, audit, stage, active, sel, suggested=sel.suggested)
        record_flags(prep, noise.flags, noise.actions, noise.relabel, stage, active, sel)
        copied.append(_records_at(old.records, upd.copied))
        whole = _summary_selection(upd, inp)
        whole.info["protected_spared"] = _spare(prep, spared, inp, upd)
        for name, values in upd.scores.items():
            scores.setdefault(name, np.full(prep.frame.height, np.nan))[inp.rows] = values
        seconds = time.perf_counter() - t0
        outcomes.append(StageOutcome(stage, len(active), inp.labels, whole,
                                     inp.rows[removed], seconds, inp.rows, upd.lists))
        reports.append({"name": stage.name, "method": stage.method, "exact": upd.exact,
                        **upd.report, "seconds": round(seconds, 4)})
        if upd.lists is not None:
            earlier = Listed(inp.rows, upd.lists[0], inp.rows[upd.lists[1]])
        active = active[upd.kept]
        say(f"  removed {len(removed)} rows in {seconds:.2f} s ({upd.report['mode']})")
    order = {"schema": 0} | {s.name: i for i, s in enumerate(prep.spec.stages, start=1)}
    return _assemble(prep, audit, copied, order, active, scores, outcomes, spared, noise,
                     time.perf_counter() - started), reports


def _spare(prep: Prepared, spared: AuditLog, inp: StageInput, upd: StageUpdate) -> int:
    """Record what the stage would remove of its protected rows, as a full run does."""
    protected = inp.protected
    if len(protected) == 0:
        return 0
    sub = prep.space.subset(inp.active)
    dist, nbr = upd.lists if upd.lists is not None else (None, None)
    with sharing_lists(sub.matrix, dist, nbr):
        return _spared(prep, spared, inp.stage, inp.active, sub, inp.labels, protected)


def _assemble(prep: Prepared, audit: AuditLog, copied: list[pl.DataFrame],
              order: dict[str, int], active: np.ndarray, scores: dict[str, np.ndarray],
              outcomes: list[StageOutcome], spared: AuditLog, noise: _Noise,
              seconds: float) -> RunResult:
    kept_positions = prep.valid_positions[active]
    table = _audit(prep, audit, copied, order)
    _check_outputs(prep, kept_positions, table)
    summary = build_summary(prep, outcomes, kept_positions, table, seconds)
    summary["engine"].update(_engine_facts(prep, outcomes))
    flagged, suggestions = noise_outputs(prep, noise.flags, noise.actions, noise.relabel,
                                         scores, summary)
    return RunResult(table, summary, prep, kept_positions, scores,
                     spared.frame(unique_ids=False) if len(prep.protected) else None,
                     flagged, suggestions, outcomes)
