"""Read, identify and validate the input and build its space once, before any stage runs."""

from __future__ import annotations

import numpy as np
import polars as pl

from curate.errors import InputError, UsageError, first_ids, quoted
from curate.io import schema as schema_mod
from curate.io.read import read_input, row_ids
from curate.io.review import protected_ids
from curate.io.suspect import refuse_id_like
from curate.methods import METHODS
from curate.pipeline.records import Prepared
from curate.settings import Spec
from curate.space.build import build_space

__all__ = ["prepare"]


def _labels_of_valid(frame: pl.DataFrame, label: str) -> np.ndarray:
    values = frame[label]
    return values.cast(pl.String).to_numpy() if values.dtype == pl.Categorical else values.to_numpy()


def _check_classes(spec: Spec, labels: np.ndarray) -> None:
    needs_two = [s for s in spec.stages if METHODS[s.method].compares_classes]
    distinct = np.unique(labels)
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


def prepare(spec: Spec) -> Prepared:
    """Read, identify and validate the input and build its space, without selecting anything."""
    frame = read_input(spec.input.path)
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
    labels = _labels_of_valid(checked, spec.input.label)
    _check_classes(spec, labels)
    valid_ids = ids.filter(pl.Series(validation.valid)).to_list()
    space = build_space(checked, kinds, spec.space, valid_ids, spec.run.engine, labels=labels)
    protected_input = _protected_positions(spec, ids)
    local = np.full(frame.height, -1, dtype=np.int64)
    local[np.flatnonzero(validation.valid)] = np.arange(int(validation.valid.sum()))
    return Prepared(spec, frame, ids, frame[spec.input.label], validation.valid,
                    validation.failures, features, kinds, space, labels,
                    local[protected_input][local[protected_input] >= 0], checked)
