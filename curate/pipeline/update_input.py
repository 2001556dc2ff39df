"""The input of an update: the run's rows in their order, then the new rows.

New rows must have the run's columns (cast to the run's types) and ids that
no old row has; a clash is an input error naming the ids. The pipeline must
still describe the run (label, id, features, space, stages with their
parameters and seed): an update continues a run, so a changed pipeline needs
a full run (``--refit``). The space is not refitted: its statistics come from
the run's valid rows, and the fingerprint proves the rebuilt space is the
run's. New rows outside the fitted ranges are measured as they are and
counted.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import polars as pl

from curate.errors import InputError, PipelineFileError, UsageError, first_ids
from curate.io.read import read_input
from curate.pipeline.records import Prepared
from curate.pipeline.state import RunState, settings_of, space_fingerprint
from curate.settings import NOMINAL_KINDS, Spec

__all__ = ["check_pipeline", "check_prepared", "combined_input", "outside_fitted"]

REFIT = "rerun everything with --refit (a full run on old and new rows)"


def combined_input(state: RunState, new: Path, spec: Spec) -> tuple[pl.DataFrame, int]:
    """The run's input rows in input order followed by the new rows; and the old row count."""
    old = state.old_input()
    try:
        fresh = read_input(new)
    except PipelineFileError as err:
        raise UsageError(f"new rows: {err.message}",
                         hint="give --new (new= in Python) an existing CSV or Parquet file, a "
                              "folder of them, or a glob") from None
    missing = [c for c in old.columns if c not in fresh.columns]
    extra = [c for c in fresh.columns if c not in old.columns]
    if missing or extra:
        words = ", ".join([f"missing {c!r}" for c in missing] + [f"extra {c!r}" for c in extra])
        raise InputError(f"new rows {new} do not have the run's columns: {words}",
                         hint=f"give the new rows exactly the run's columns: "
                              f"{', '.join(old.columns[:12])}")
    cast = []
    for name, dtype in old.schema.items():
        try:
            cast.append(fresh[name].cast(dtype, strict=True))
        except pl.exceptions.PolarsError:
            raise InputError(f"new rows {new}: column {name!r} cannot be read as the run's "
                             f"type {dtype} (it is {fresh[name].dtype})",
                             hint="fix the values of that column in the new rows") from None
    fresh = pl.DataFrame(cast)
    if spec.input.id is not None:
        clash = fresh.filter(pl.col(spec.input.id).is_in(old[spec.input.id].implode()))
        if clash.height:
            raise InputError(f"new rows {new}: id column {spec.input.id!r} repeats ids of the "
                             f"run's rows: {first_ids(clash[spec.input.id].sort().to_list())}",
                             hint="give new rows ids that the run does not have, or leave "
                                  "out rows that are already in the run")
    return pl.concat([old, fresh], how="vertical"), old.height


def _differences(was: Any, now: Any, where: str) -> list[str]:
    if isinstance(was, dict) and isinstance(now, dict):
        found: list[str] = []
        for key in sorted(set(was) | set(now)):
            found += _differences(was.get(key), now.get(key), f"{where}.{key}" if where else key)
        return found
    if isinstance(was, list) and isinstance(now, list) and len(was) == len(now):
        return [d for i, (a, b) in enumerate(zip(was, now, strict=True))
                for d in _differences(a, b, f"{where}[{i}]")]
    return [] if was == now else [f"{where}: {was!r} in the run, {now!r} now"]


def check_pipeline(state: RunState, spec: Spec, features: list[str] | None = None) -> None:
    """Stop (exit code 2) when the pipeline no longer describes the run."""
    was = dict(state.state["settings"])
    now = settings_of(spec, features if features is not None else was["features"])
    changed = _differences(was, now, "")
    if changed:
        raise UsageError(f"the pipeline {spec.source} differs from the one the run "
                         f"{state.folder} used: {'; '.join(changed[:4])}",
                         hint=f"use the run's pipeline, or {REFIT}")


def check_prepared(state: RunState, prep: Prepared, old_rows: int) -> None:
    """The old rows must pass the schema as they did, and rebuild the run's space exactly."""
    was_valid = state.rows["valid"].to_numpy()
    if not np.array_equal(prep.valid[:old_rows], was_valid):
        moved = np.flatnonzero(prep.valid[:old_rows] != was_valid)
        raise InputError(f"with the new rows, {first_ids(prep.ids.gather(moved).to_list())} of "
                         "the run pass or fail the schema differently (a unique column?)",
                         hint=f"fix the new rows, or {REFIT}")
    check_pipeline(state, prep.spec, prep.features)
    old_space = prep.space.subset(np.arange(int(was_valid.sum())))
    if space_fingerprint(old_space) != state.state["space"]["sha256"]:
        raise UsageError(f"the run's rows no longer give the run's space (its fingerprint "
                         f"differs): {state.folder} was written by another curate or its "
                         "files were changed", hint=f"{REFIT}")


def outside_fitted(state: RunState, prep: Prepared, old_rows: int) -> dict[str, Any]:
    """How many new rows have a value outside the fitted ranges (a number beyond the range, a
    category the fit rows never showed), in total and per column."""
    fresh = prep.checked.slice(int(prep.valid[:old_rows].sum()))
    outside = np.zeros(fresh.height, dtype=bool)
    per_column: dict[str, int] = {}
    for fit in state.state["space"]["fit"]:
        column = fresh[fit["column"]]
        if prep.kinds[fit["column"]] in NOMINAL_KINDS:
            text = column.cast(pl.String)
            beyond = (~text.is_in(fit["levels"]) & text.is_not_null()).to_numpy()
        else:
            values = column.cast(pl.Float64)
            low = -np.inf if fit["min"] is None else fit["min"]
            high = np.inf if fit["max"] is None else fit["max"]
            beyond = ((values < low) | (values > high)).fill_null(False).to_numpy()
        if beyond.any():
            per_column[fit["column"]] = int(beyond.sum())
        outside |= beyond
    return {"rows_outside_fitted_ranges": int(outside.sum()), "outside_by_column": per_column}
