"""Read, identify and validate the input and build its space once, before any stage runs.

The task is settled here too: ``[input] task`` or, for ``"auto"``, the target
column (:func:`curate.io.task.detect_task`); a stage whose method exists for
regression only makes an "auto" numeric target a regression one. A regression
target must be numbers that vary (else an InputError, exit code 3), and every
stage's parameters are checked again against its method's table for the task.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import polars as pl

from curate.errors import InputError, UsageError, first_ids, quoted
from curate.io import schema as schema_mod
from curate.io.read import read_input, row_ids
from curate.io.review import protected_ids
from curate.io.suspect import refuse_id_like
from curate.io.task import TaskChoice, detect_task
from curate.methods import METHODS, method_for
from curate.methods._targets import check_targets, quantile_bins
from curate.pipeline.records import Prepared
from curate.settings import Spec, check_params
from curate.space.build import build_space
from curate.space.labels import encode_labels

SPACE_BINS = 10  # quantile bins of a numeric target that HVDM and learned weights read as classes

__all__ = ["prepare", "prepare_frame"]


def _labels_of_valid(frame: pl.DataFrame, label: str) -> np.ndarray:
    values = frame[label]
    if values.dtype in (pl.Categorical, pl.String) and values.null_count() == 0:
        # fixed-width text, not Python objects: every later count or comparison of the
        # labels runs in compiled loops (on a million rows, seconds each as objects)
        return values.cast(pl.String).to_numpy().astype(str)
    return values.cast(pl.String).to_numpy() if values.dtype == pl.Categorical else values.to_numpy()


def _check_classes(spec: Spec, labels: np.ndarray) -> None:
    needs_two = [s for s in spec.stages if method_for(s.method, "classification").compares_classes]
    distinct = encode_labels(labels)[0]
    if needs_two and len(distinct) < 2:
        raise InputError(f"{spec.input.path}: label column {spec.input.label!r} has one class "
                         f"only ({quoted(distinct[0])}); stage {needs_two[0].name!r} compares classes",
                         hint="give a table with two or more classes, or drop the editing and "
                              "condensing stages")


def _protected_positions(spec: Spec, ids: pl.Series) -> np.ndarray:
    wanted = [str(v) for v in spec.input.protect]
    if spec.input.protect_file is not None:
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


def choose_task(spec: Spec, target: pl.Series) -> TaskChoice:
    """The run's task and why: as set, read from the target, or asked for by a stage's method."""
    choice = detect_task(target, spec.input.task, column=spec.input.label)
    only = next((s for s in spec.stages if s.method not in METHODS), None)
    if spec.input.task == "auto" and choice.task == "classification" and only is not None:
        check_targets(target.drop_nulls(), where=f"{spec.input.path}, column "
                      f"{spec.input.label!r} (stage {only.name!r} uses {only.method})")
        return TaskChoice("regression", f"stage {only.name!r} uses {only.method}, a method for "
                                        f"numeric targets ({choice.reason})")
    return choice


def resolve_stages(spec: Spec, task: str) -> Spec:
    """Every stage's method for the task, its parameters checked and defaults filled from it.

    ``[input] unit`` fills the ``unit`` parameter of the methods that write target values.
    """
    stages = []
    for stage in spec.stages:
        info = method_for(stage.method, task, f"{spec.source}: stage {stage.name!r}")
        given = dict(stage.given if stage.given is not None else stage.params)
        if spec.input.unit and info.param("unit") is not None:
            given.setdefault("unit", spec.input.unit)
        params = check_params(info, given, where=f"{spec.source}: stage {stage.name!r}")
        stages.append(replace(stage, params=params))
    return replace(spec, stages=tuple(stages))


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
    refuse_id_like(checked, kinds, spec.input)
    valid_ids = ids.filter(pl.Series(validation.valid)).to_list()
    fit_valid = None if fit is None else fit[validation.valid]
    target = checked[spec.input.label]
    # an update keeps its run's task and bins: both are read from the rows the run fitted
    task = choose_task(spec, target if fit_valid is None else target.filter(pl.Series(fit_valid)))
    spec = resolve_stages(spec, task.task)
    if task.task == "regression":
        labels = check_targets(target, ids=valid_ids,
                               where=f"{spec.input.path}, column {spec.input.label!r}")
        edges = quantile_bins(labels if fit_valid is None else labels[fit_valid], SPACE_BINS)[1]
        classes = np.searchsorted(edges[1:-1], labels, side="left").astype(str)
    else:
        labels = classes = _labels_of_valid(checked, spec.input.label)
        _check_classes(spec, labels)
    space = build_space(checked, kinds, spec.space, valid_ids, spec.run.engine, labels=classes,
                        fit_rows=fit_valid)
    protected_input = _protected_positions(spec, ids)
    local = np.full(frame.height, -1, dtype=np.int64)
    local[np.flatnonzero(validation.valid)] = np.arange(int(validation.valid.sum()))
    return Prepared(spec, frame, ids, frame[spec.input.label], validation.valid,
                    validation.failures, features, kinds, space, labels,
                    local[protected_input][local[protected_input] >= 0], checked, task, fit)
