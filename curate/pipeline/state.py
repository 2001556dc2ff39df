"""What a run keeps in its folder so that a later update can build on it.

Every run folder gets a sub-folder ``update/``:

* ``state.json``: the settings the run used (label, id, features, space,
  stages with their parameters, seed), the fitted space (per feature: the
  range of a number or the levels of a category seen in the rows it was
  fitted on; the weights) and its fingerprint, a SHA-256 of the embedded
  matrix of the valid rows together with its column names and metric. An
  update rebuilds the space of the old rows with the same fitted statistics
  and checks the fingerprint, so it works in exactly the run's space;
* ``rows.parquet``: every input row id in input order, whether it passed the
  schema, and whether the space was fitted on it (an update keeps the fit of
  the run it started from, so a chain of updates keeps the first run's): the
  run folder's kept and removed rows are the old input, and this puts them
  back in their order (ties between equal distances are broken by input
  position, so order matters);
* ``lists.npz``: for each editing stage whose result is a function of every
  row's k nearest neighbours (ENN, All-kNN, Tomek links, NCR, hardness), the
  stage's rows and their neighbour lists (input positions and distances).
  The lists of the rows that a stage removed are in the audit too, but the
  kept rows' lists are not, and the update needs both.

Condensing and duplicate stages need nothing more: which rows they kept,
and the nearest kept row of each removed one, are in the audit.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import polars as pl

from curate.errors import UsageError
from curate.methods import method_for
from curate.pipeline.summary import _jsonable
from curate.settings import NOMINAL_KINDS, Spec, StageSettings
from curate.space.points import Space

if TYPE_CHECKING:
    from curate.pipeline.records import RunResult

__all__ = ["FORMAT", "RunState", "STATE_DIR", "fit_descriptor", "read_state", "state_size",
           "space_fingerprint", "stage_settings", "write_state"]

STATE_DIR = "update"
FORMAT = 1


def space_fingerprint(space: Space) -> str:
    """SHA-256 of the embedded matrix, its column names and its metric.

    Examples
    --------
    >>> a = Space.from_matrix([[0.0, 1.0]])
    >>> space_fingerprint(a) == space_fingerprint(Space.from_matrix([[0.0, 1.0]]))
    True
    >>> space_fingerprint(a) == space_fingerprint(Space.from_matrix([[0.0, 2.0]]))
    False
    """
    digest = hashlib.sha256()
    digest.update(json.dumps([space.metric, list(space.columns), space.weights],
                             sort_keys=True).encode())
    digest.update(np.ascontiguousarray(space.matrix, dtype=np.float64).tobytes())
    if space.gaps is not None:
        digest.update(np.packbits(space.gaps).tobytes())
    return digest.hexdigest()


def fit_descriptor(frame: pl.DataFrame, kinds: dict[str, str]) -> list[dict[str, Any]]:
    """Per feature, what the fit rows showed: the range of a number, the levels of a category.

    Examples
    --------
    >>> fit_descriptor(pl.DataFrame({"a": [2.0, None, 5.0], "b": ["x", "y", "x"]}),
    ...                {"a": "float", "b": "category"})
    [{'column': 'a', 'min': 2.0, 'max': 5.0}, {'column': 'b', 'levels': ['x', 'y']}]
    """
    out: list[dict[str, Any]] = []
    for name, kind in kinds.items():
        column = frame[name]
        if kind in NOMINAL_KINDS:
            levels = column.cast(pl.String).drop_nulls().unique().sort().to_list()
            out.append({"column": name, "levels": levels})
        else:
            values = column.cast(pl.Float64).drop_nulls()
            low, high = (values.min(), values.max()) if len(values) else (None, None)
            out.append({"column": name, "min": low, "max": high})
    return out


def stage_settings(stage: StageSettings, run_seed: int) -> dict[str, Any]:
    """The settings of a stage that decide its result, as plain values."""
    return {"name": stage.name, "method": stage.method, "params": _jsonable(dict(stage.params)),
            "classes": _jsonable(stage.classes), "max_removed_share": stage.max_removed_share,
            "seed": stage.seed if stage.seed is not None else run_seed}


def settings_of(spec: Spec, features: list[str]) -> dict[str, Any]:
    """Everything in a pipeline that an update must find unchanged, as plain values."""
    space = spec.space
    return {"label": spec.input.label, "id": spec.input.id, "features": list(features),
            "space": {"scale": space.scale, "distance": space.distance, "missing": space.missing,
                      "weights": _jsonable(space.weights if isinstance(space.weights, str)
                                           else dict(space.weights))},
            "stages": [stage_settings(s, spec.run.seed) for s in spec.stages]}


def _stage_metric(space: Space, rows: np.ndarray, valid_positions: np.ndarray) -> str:
    """The metric of a stage's space: plain Lp unless some of its rows have gaps."""
    if space.gaps is None:
        return space.metric
    gappy = space.gaps[np.searchsorted(valid_positions, rows)].any()
    return space.metric if gappy else ("manhattan" if space.metric.startswith("manhattan")
                                       else "euclidean")


def state_size(result: RunResult) -> int:
    """About how many bytes :func:`write_state` writes (for the message of a full disk)."""
    lists = sum(o.rows.nbytes * (1 + 2 * o.lists[1].shape[1])
                for o in result.outcomes if o.lists is not None)
    return int(lists + 16 * result.prepared.frame.height + 100_000)


def write_state(result: RunResult, where: Path) -> None:
    """Write the state folder (state, row order, neighbour lists) of ``result`` as ``where``
    (in a run folder: ``update/``)."""
    prep = result.prepared
    where = Path(where)
    where.mkdir()
    arrays: dict[str, np.ndarray] = {}
    stages = []
    for number, out in enumerate(result.outcomes):
        listed = out.lists is not None and method_for(out.stage.method,
                                                          prep.task.task).judged_by_lists
        if listed:
            assert out.lists is not None
            dist, nbr = out.lists
            arrays[f"s{number}_rows"] = out.rows
            arrays[f"s{number}_dist"] = dist
            arrays[f"s{number}_nbr"] = out.rows[nbr]
        stages.append({"lists": int(out.lists[1].shape[1]) if listed and out.lists else None,
                       "rows_in": out.rows_in, "metric": _stage_metric(prep.space, out.rows,
                                                                      prep.valid_positions),
                       "info": _jsonable(
                           {k: v for k, v in out.selection.info.items()
                            if k in ("passes", "steps", "rounds")})})
    np.savez(where / "lists.npz", allow_pickle=False, **arrays)
    fitted = prep.valid if prep.fit is None else prep.fit & prep.valid
    pl.DataFrame({"row_id": prep.ids, "valid": prep.valid, "fit": fitted}).write_parquet(
        where / "rows.parquet")
    state = {
        "format": FORMAT, "curate": metadata.version("curate"),
        "columns": prep.frame.columns,
        "settings": settings_of(prep.spec, prep.features),
        "kinds": prep.kinds,
        "space": {"metric": prep.space.metric, "columns": list(prep.space.columns),
                  "weights": prep.space.weights, "fit": fit_descriptor(
                      prep.checked.filter(pl.Series(fitted[prep.valid])), prep.kinds),
                  "sha256": space_fingerprint(prep.space)},
        "engine": {"backend": prep.spec.run.engine.backend},
        "protected": prep.ids.gather(prep.valid_positions[prep.protected]).to_list(),
        "stages": stages,
        "input_sha256": result.summary.get("input_sha256"),
        "pipeline_sha256": result.summary.get("pipeline_sha256"),
    }
    (where / "state.json").write_text(json.dumps(_jsonable(state), indent=1) + "\n")


@dataclass(frozen=True)
class RunState:
    """A run folder as an update reads it: its tables, its kept state, and where it is."""

    folder: Path
    state: dict[str, Any]
    rows: pl.DataFrame
    lists: dict[str, np.ndarray]
    kept: pl.DataFrame
    removed: pl.DataFrame
    audit: pl.DataFrame

    @property
    def columns(self) -> list[str]:
        """The input's columns, in input order."""
        return list(self.state["columns"])

    def old_input(self) -> pl.DataFrame:
        """The run's input rows, in input order, with their own columns only."""
        both = pl.concat([self.kept.select(["row_id", *self._own()]),
                          self.removed.select(["row_id", *self._own()])], how="vertical")
        joined = self.rows.select("row_id").join(both, on="row_id", how="left",
                                                  maintain_order="left")
        return joined.select(self.columns)

    def _own(self) -> list[str]:
        return [c for c in self.columns if c != "row_id"]


def _need(folder: Path, name: str, what: str) -> Path:
    path = folder / name
    if not path.exists():
        raise UsageError(f"{folder} has no {name}: {what}",
                         hint="rerun the pipeline once (curate run PIPELINE --out "
                              f"{folder} --overwrite) with this version of curate; updates can "
                              "start from that run folder")
    return path


def read_state(folder: Path) -> RunState:
    """Read a run folder and its update state, with a clear error for older run folders."""
    folder = Path(folder)
    if not (folder / "kept.parquet").exists():
        raise UsageError(f"{folder} is not a run folder (no kept.parquet)",
                         hint="give --run the folder that `curate run` wrote")
    state_file = _need(folder, f"{STATE_DIR}/state.json", "it was written by an older curate, "
                       "before run folders kept what an update needs")
    state = json.loads(state_file.read_text())
    if state.get("format") != FORMAT:
        raise UsageError(f"{folder}: its update state has format {state.get('format')!r}, this "
                         f"curate reads format {FORMAT}",
                         hint=f"rerun the pipeline once (curate run PIPELINE --out {folder} "
                              "--overwrite) with this version of curate")
    with np.load(_need(folder, f"{STATE_DIR}/lists.npz", "its update state is incomplete")) as z:
        lists = {key: z[key] for key in z.files}
    rows = pl.read_parquet(_need(folder, f"{STATE_DIR}/rows.parquet",
                                 "its update state is incomplete"))
    return RunState(folder, state, rows, lists, pl.read_parquet(folder / "kept.parquet"),
                    pl.read_parquet(folder / "removed.parquet"),
                    pl.read_parquet(folder / "audit.parquet"))
