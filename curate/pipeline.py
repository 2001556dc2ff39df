"""Run the stages in order on the rows still kept, keep the partition invariant, write the run folder."""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import polars as pl

from curate import schema as schema_mod
from curate.audit import AuditBuilder
from curate.errors import InputError, SafetyLimitError, UsageError, first_ids
from curate.methods import METHODS
from curate.methods.base import Selection
from curate.neighbour_lists import sharing_lists
from curate.neighbours import choose_backend, recording, summarise_calls
from curate.space import Space, build_space
from curate.spec import Spec, StageSettings
from curate.table import read_input, row_ids

__all__ = ["Prepared", "RunResult", "StageOutcome", "prepare", "prepare_frame", "execute"]

NEIGHBOUR_FAMILIES = ("editing", "condensing", "hybrid")


@dataclass
class Prepared:
    """The checked input, ready for stages: the table, ids, valid rows and their space."""

    spec: Spec
    frame: pl.DataFrame
    ids: pl.Series
    labels: pl.Series
    valid: np.ndarray
    failures: pl.DataFrame
    features: list[str]
    kinds: dict[str, str]
    space: Space
    space_labels: np.ndarray
    protected: np.ndarray
    checked: pl.DataFrame
    fit: np.ndarray | None = None

    @property
    def valid_positions(self) -> np.ndarray:
        """Input positions of the rows that passed the schema, in input order."""
        return np.flatnonzero(self.valid)


@dataclass
class RunResult:
    """What a run produced: kept, removed and audit tables and the summary."""

    kept: pl.DataFrame
    removed: pl.DataFrame
    audit: pl.DataFrame
    summary: dict[str, Any]
    prepared: Prepared
    kept_positions: np.ndarray
    scores: dict[str, np.ndarray] = field(default_factory=dict)
    spared: pl.DataFrame | None = None
    outcomes: list[StageOutcome] = field(default_factory=list)


def _labels_of_valid(frame: pl.DataFrame, label: str) -> np.ndarray:
    values = frame[label]
    return values.cast(pl.String).to_numpy() if values.dtype == pl.Categorical else values.to_numpy()


def _check_classes(spec: Spec, labels: np.ndarray) -> None:
    needs_two = [s for s in spec.stages if METHODS[s.method].family in NEIGHBOUR_FAMILIES]
    distinct = np.unique(labels)
    if needs_two and len(distinct) < 2:
        raise InputError(f"{spec.input.path}: label column {spec.input.label!r} has one class "
                         f"only ({distinct[0]!r}); stage {needs_two[0].name!r} compares classes",
                         hint="give a table with two or more classes, or drop the editing and "
                              "condensing stages")


def _protected_positions(spec: Spec, ids: pl.Series) -> np.ndarray:
    wanted = [str(v) for v in spec.input.protect]
    if spec.input.protect_file is not None:
        from curate.review import protected_ids

        wanted += protected_ids(spec.input.protect_file)
    if not wanted:
        return np.zeros(0, dtype=np.int64)
    as_text = ids.cast(pl.String)
    mask = as_text.is_in(wanted).to_numpy()
    unknown = sorted(set(wanted) - set(as_text.filter(pl.Series(mask)).to_list()))
    if unknown:
        raise UsageError(f"{spec.source}: protected rows {first_ids(unknown)} are not in the input",
                         hint="protect only row ids that the input has")
    return np.flatnonzero(mask)


def prepare(spec: Spec) -> Prepared:
    """Read, identify and validate the input and build its space, without selecting anything."""
    return prepare_frame(spec, read_input(spec.input.path))


def prepare_frame(spec: Spec, frame: pl.DataFrame, fit: np.ndarray | None = None) -> Prepared:
    """Identify and validate ``frame`` and build its space (fitted on the ``fit`` input rows,
    a boolean mask over ``frame``, when given: an update keeps its run's fitted space)."""
    if spec.input.label not in frame.columns:
        raise InputError(f"{spec.input.path}: label column {spec.input.label!r} is not in the "
                         f"input (columns: {', '.join(frame.columns[:12])})",
                         hint="fix [input] label (names are case-sensitive)")
    if "row_id" in frame.columns and spec.input.id != "row_id":
        raise InputError(f"{spec.input.path}: the input already has a column 'row_id'",
                         hint="set [input] id = \"row_id\" if it identifies rows, or rename it")
    ids = row_ids(frame, spec.input.id, str(spec.input.path))
    validation = schema_mod.validate(frame, spec.input, ids.to_list())
    checked = validation.frame
    features = schema_mod.feature_columns(checked, spec.input)
    kinds = schema_mod.feature_kinds(checked, features, spec.input.columns)
    labels = _labels_of_valid(checked, spec.input.label)
    _check_classes(spec, labels)
    valid_ids = ids.filter(pl.Series(validation.valid)).to_list()
    space = build_space(checked, kinds, spec.space, valid_ids, spec.run.engine, labels=labels,
                        fit_rows=None if fit is None else fit[validation.valid])
    protected_input = _protected_positions(spec, ids)
    local = np.full(frame.height, -1, dtype=np.int64)
    local[np.flatnonzero(validation.valid)] = np.arange(int(validation.valid.sum()))
    return Prepared(spec, frame, ids, frame[spec.input.label], validation.valid,
                    validation.failures, features, kinds, space, labels,
                    local[protected_input][local[protected_input] >= 0], checked, fit)


def _removable(stage: StageSettings, labels: np.ndarray, protected: np.ndarray) -> np.ndarray:
    text = labels.astype(str)
    if stage.classes == "all":
        mask = np.ones(len(labels), dtype=bool)
    elif stage.classes == "all-but-smallest":
        values, counts = np.unique(text, return_counts=True)
        smallest = values[np.lexsort((values, counts))[0]] if len(values) > 1 else None
        mask = text != smallest
    else:
        wanted = [str(c) for c in stage.classes]
        unknown = sorted(set(wanted) - set(text))
        if unknown:
            raise UsageError(f"stage {stage.name!r}: classes {unknown} do not occur in its input",
                             hint=f"use labels that occur: {', '.join(sorted(set(text))[:10])}")
        mask = np.isin(text, wanted)
    mask[protected] = False
    return mask


def _check_k(stage: StageSettings, labels: np.ndarray, removable: np.ndarray) -> None:
    k = stage.params.get("k")
    if not isinstance(k, int):
        return
    n = len(labels)
    if k >= n:
        raise UsageError(f"stage {stage.name!r}: k = {k} but only {n} rows reach this stage",
                         hint=f"set k below {n} (k counts neighbours, the row itself excluded)")
    values, counts = np.unique(labels[removable].astype(str), return_counts=True)
    sizes = dict(zip(*np.unique(labels.astype(str), return_counts=True), strict=True))
    small = [str(v) for v in values if sizes[v] <= k]
    if small and METHODS[stage.method].family in NEIGHBOUR_FAMILIES:
        raise UsageError(f"stage {stage.name!r}: k = {k} is not below the size of class "
                         f"{small[0]!r} ({sizes[small[0]]} rows), so its rows cannot outvote "
                         "their neighbours",
                         hint=f"lower k below {sizes[small[0]]}, or keep that class out of reach "
                              "with classes = \"all-but-smallest\" or a list of classes")


def check_safety(stage: StageSettings, labels: np.ndarray, removed_local: np.ndarray,
            ids: list[Any]) -> None:
    if stage.max_removed_share >= 1.0 or len(removed_local) == 0:
        return
    values, entering = np.unique(labels.astype(str), return_counts=True)
    leaving = dict(zip(*np.unique(labels[removed_local].astype(str), return_counts=True),
                       strict=True))
    for value, total in zip(values.tolist(), entering, strict=True):
        share = leaving.get(value, 0) / total
        if share > stage.max_removed_share:
            rows = [ids[i] for i in removed_local if str(labels[i]) == value]
            raise SafetyLimitError(
                f"stage {stage.name!r} ({stage.method}) would remove {leaving[value]} of "
                f"{total} rows of class {value!r} ({share:.0%}), over its limit "
                f"max_removed_share = {stage.max_removed_share}; {first_ids(rows)}",
                hint="review why (lower k, classes = \"all-but-smallest\"), or raise "
                     "max_removed_share for this stage if that share is expected "
                     "(condensing stages usually remove most rows)")


def check_stages(prep: Prepared) -> None:
    """Check every stage's parameters against the rows that the first stage would get."""
    for stage in prep.spec.stages:
        removable = _removable(stage, prep.space_labels, prep.protected)
        if METHODS[stage.method].uses_neighbours:
            _check_k(stage, prep.space_labels, removable)


def run_stage(stage: StageSettings, space: Space, labels: np.ndarray, protected: np.ndarray,
              seed: int) -> Selection:
    """Run one stage's method on ``space`` (rows still kept) and return its selection."""
    info = METHODS[stage.method]
    removable = _removable(stage, labels, protected)
    if info.uses_neighbours:
        _check_k(stage, labels, removable)
    stage_seed = stage.seed if stage.seed is not None else seed
    if space.engine.cluster is not None:
        from curate.distributed import run_on_cluster

        return run_on_cluster(info, space, labels, removable=removable, seed=stage_seed,
                              params=stage.params)
    return info.func(space, labels, removable=removable, seed=stage_seed, **dict(stage.params))


def _quarantine(prep: Prepared, audit: AuditBuilder) -> None:
    failures = prep.failures
    if failures.height == 0:
        return
    first = failures.group_by("position", maintain_order=True).agg(
        pl.col("column").first(), pl.col("check").first(), pl.col("value").first(), pl.len())
    first = first.sort("position")
    details = [f"failed check {check} on column {column!r} (value {value!r})"
               + (f" and {n - 1} more checks" if n > 1 else "")
               for _, column, check, value, n in first.iter_rows()]
    pos = first["position"].to_numpy().astype(np.int64)
    audit.add(stage="schema", method="schema", positions=pos, reason=["schema"] * len(pos),
              detail=details, neighbours=[np.zeros(0, np.int64)] * len(pos),
              distances=[np.zeros(0)] * len(pos), kept_as=np.full(len(pos), -1), step=np.zeros(len(pos)))


@dataclass
class StageOutcome:
    """One stage's facts for the summary."""

    stage: StageSettings
    rows_in: int
    labels_in: np.ndarray
    selection: Selection
    removed_input: np.ndarray
    seconds: float
    rows: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    lists: tuple[np.ndarray, np.ndarray] | None = None


def _record(prep: Prepared, audit: AuditBuilder, stage: StageSettings, active: np.ndarray,
            sel: Selection, only: np.ndarray | None = None) -> np.ndarray:
    """Map a selection to input positions and append its audit records; return removed positions.

    ``only`` limits the records to those local positions (for rows a stage was kept from removing).
    """
    to_input = prep.valid_positions[active]
    pick = np.arange(len(sel.removed)) if only is None else np.flatnonzero(np.isin(sel.removed, only))
    removed = to_input[sel.removed[pick]]
    audit.add(stage=stage.name, method=stage.method, positions=removed,
              reason=[sel.reason[i] for i in pick], detail=[sel.detail[i] for i in pick],
              neighbours=[to_input[sel.neighbours[i]] for i in pick],
              distances=[sel.distances[i] for i in pick],
              kept_as=np.where(sel.kept_as[pick] >= 0, to_input[np.maximum(sel.kept_as[pick], 0)], -1),
              step=sel.step[pick])
    return removed


def _spared(prep: Prepared, spared: AuditBuilder, stage: StageSettings, active: np.ndarray,
            sub: Space, labels: np.ndarray, protected: np.ndarray) -> int:
    """Record which protected rows the stage would have removed, had they not been protected."""
    if len(protected) == 0:
        return 0
    free = run_stage(stage, sub, labels, np.zeros(0, dtype=np.int64), prep.spec.run.seed)
    return len(_record(prep, spared, stage, active, free, only=protected))


def execute(prep: Prepared, progress: Callable[[str], None] | None = None) -> RunResult:
    """Run every stage on the rows still kept and assemble the result (nothing is written).

    With a ``[cluster]`` address the stages run inside one Dask session that
    closes when they end (see :mod:`curate.distributed`).
    """
    from curate.distributed import cluster_session

    with cluster_session(prep.spec.cluster):
        return _execute(prep, progress)


def _execute(prep: Prepared, progress: Callable[[str], None] | None) -> RunResult:
    from curate.summary import build_summary

    say = progress or (lambda _msg: None)
    started = time.perf_counter()
    labels = prep.space_labels
    audit = AuditBuilder(prep.ids, prep.labels)
    spared = AuditBuilder(prep.ids, prep.labels)
    _quarantine(prep, audit)
    active = np.arange(prep.space.n)
    ids_valid = prep.ids.gather(prep.valid_positions).to_list()
    outcomes: list[StageOutcome] = []
    scores: dict[str, np.ndarray] = {}
    for number, stage in enumerate(prep.spec.stages, start=1):
        say(f"stage {number}/{len(prep.spec.stages)} {stage.name!r} ({stage.method}) "
            f"on {len(active)} rows")
        t0 = time.perf_counter()
        sub = prep.space.subset(active)
        stage_labels = labels[active]
        protected = np.flatnonzero(np.isin(active, prep.protected))
        with sharing_lists(sub.matrix) as lists:
            with recording() as calls:
                sel = run_stage(stage, sub, stage_labels, protected, prep.spec.run.seed)
            # the lists just kept serve the run without protection too
            spared_count = _spared(prep, spared, stage, active, sub, stage_labels, protected)
        if calls:
            sel.info["engine"] = summarise_calls(calls)
        _verify_partition(sel, len(active), stage)
        check_safety(stage, stage_labels, sel.removed, [ids_valid[a] for a in active])
        removed_input = _record(prep, audit, stage, active, sel)
        sel.info["protected_spared"] = spared_count
        for name, values in sel.scores.items():
            full = scores.setdefault(name, np.full(prep.frame.height, np.nan))
            full[prep.valid_positions[active]] = values
        outcomes.append(StageOutcome(stage, len(active), stage_labels, sel, removed_input,
                                     time.perf_counter() - t0, prep.valid_positions[active],
                                     lists.pair()))
        active = active[sel.kept]
        say(f"  removed {len(sel.removed)} rows in {outcomes[-1].seconds:.2f} s")
    kept_positions = prep.valid_positions[active]
    table = audit.frame()
    kept, removed = _split(prep, kept_positions, scores)
    _check_outputs(prep, kept, removed, table)
    summary = build_summary(prep, outcomes, kept, removed, table, time.perf_counter() - started)
    summary["engine"].update(_engine_facts(prep, outcomes))
    return RunResult(kept, removed, table, summary, prep, kept_positions, scores,
                     spared.frame(unique_ids=False) if len(prep.protected) else None, outcomes)


def _engine_facts(prep: Prepared, outcomes: list[StageOutcome]) -> dict[str, Any]:
    """Which neighbour backend the run's space gets and, for the approximate one, its recall.

    The recall is the lowest that any stage's approximate query measured for
    itself (on a seeded sample of its queries against the exact engine), so it
    describes the neighbours the stages actually used; nothing is searched again.
    """
    if not any(METHODS[s.method].uses_neighbours for s in prep.spec.stages):
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


def _verify_partition(sel: Selection, n: int, stage: StageSettings) -> None:
    together = np.concatenate([sel.kept, sel.removed])
    if len(together) != n or not np.array_equal(np.sort(together), np.arange(n)):
        raise AssertionError(f"stage {stage.name!r}: kept and removed rows do not partition "
                             "its input")


def _split(prep: Prepared, kept_positions: np.ndarray,
           scores: dict[str, np.ndarray]) -> tuple[pl.DataFrame, pl.DataFrame]:
    mask = np.zeros(prep.frame.height, dtype=bool)
    mask[kept_positions] = True
    base = prep.frame.with_columns(prep.ids) if prep.spec.input.id != "row_id" else prep.frame
    if prep.spec.output.scores:
        base = base.with_columns([pl.Series(name, values) for name, values in scores.items()
                                  if name not in base.columns])
    keep = pl.Series(mask)
    return base.filter(keep), base.filter(~keep)


def _check_outputs(prep: Prepared, kept: pl.DataFrame, removed: pl.DataFrame,
                   audit: pl.DataFrame) -> None:
    """The contract, checked before anything is written."""
    k, r = kept["row_id"], removed["row_id"]
    if kept.height + removed.height != prep.frame.height or pl.concat([k, r]).n_unique() != \
            prep.frame.height:
        raise AssertionError("kept and removed rows do not partition the input")
    if audit.height != removed.height or not audit["row_id"].sort().equals(r.sort()):
        raise AssertionError("the audit does not have exactly one row per removed row")
