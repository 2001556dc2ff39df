"""summary.json: counts per stage, class and reason; timings; hashes; versions; seed.

It says which task the run chose and why (``task``). A regression run has no
classes: ``classes_in``, ``classes_kept`` and each stage's ``by_class_*`` are
empty, and ``target`` describes the target before and after (count, mean,
standard deviation, quartiles), each stage's ``target_removed`` the rows it took.
"""

from __future__ import annotations

import functools
import platform
from collections import Counter
from importlib import metadata
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import polars as pl

from curate.io.read import file_sha256
from curate.methods._targets import describe_target
from curate.space.labels import class_sizes

if TYPE_CHECKING:
    from curate.pipeline.records import Prepared, StageOutcome

__all__ = ["build_summary", "doubt_summary", "versions"]

DOUBT_LEVELS = (0.5, 0.75, 0.9)  # bands of the doubt score the summary and the report count
# On a numeric target the doubt is a residual in standard deviations of the target.
REGRESSION_DOUBT_LEVELS = (1.0, 2.0, 3.0)
DOUBT_MEASURES = {
    "classification": "1 - the committee's mean out-of-fold probability of the row's label",
    "regression": "|target - the committee's mean out-of-fold prediction| in standard "
                  "deviations of the target",
}

_PACKAGES = ("curate", "polars", "numpy", "scipy", "scikit-learn", "imbalanced-learn", "pandera")


@functools.cache
def _installed() -> tuple[tuple[str, str], ...]:
    found = [("python", platform.python_version())]
    for name in _PACKAGES:
        try:
            found.append((name, metadata.version(name)))
        except metadata.PackageNotFoundError:
            found.append((name, "not installed"))
    return tuple(found)


def versions() -> dict[str, str]:
    """Versions of Python and of the packages that decide results.

    Examples
    --------
    >>> "polars" in versions() and "python" in versions()
    True
    """
    return dict(_installed())


def _counts(values: np.ndarray) -> dict[str, int]:
    names, counts = class_sizes(np.asarray(values))
    return {str(n): int(c) for n, c in zip(names, counts, strict=True)}


def _jsonable(value: Any) -> Any:
    if isinstance(value, dict):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_jsonable(v) for v in value]
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, np.ndarray):
        return value.tolist()
    return value


def _stage_record(prep: Prepared, out: StageOutcome) -> dict[str, Any]:
    sel = out.selection
    ids = prep.ids
    regression = prep.task.task == "regression"
    record: dict[str, Any] = {
        "name": out.stage.name,
        "method": out.stage.method,
        "params": _jsonable(dict(out.stage.params)),
        "classes": _jsonable(out.stage.classes),
        "max_removed_share": out.stage.max_removed_share,
        "keep_every_class": out.stage.keep_every_class,
        "rows_in": out.rows_in,
        "removed": len(sel.removed),
        "kept": len(sel.kept),
        "by_reason": dict(sorted(Counter(sel.reason).items())),
        "by_class_in": {} if regression else _counts(out.labels_in),
        "by_class_removed": {} if regression else _counts(out.labels_in[sel.removed]),
        "seconds": round(out.seconds, 4),
        "info": _jsonable(sel.info),
    }
    if regression:
        record["target_removed"] = describe_target(out.labels_in[sel.removed])
    if sel.flagged is not None:
        record["flagged_kept"] = len(sel.flagged.removed)
        record["flagged_by_reason"] = dict(sorted(Counter(sel.flagged.reason).items()))
        record["by_class_flagged"] = {} if regression else _counts(out.labels_in[sel.flagged.removed])
    if sel.groups:
        to_input = prep.valid_positions
        record["groups"] = [ids.gather(to_input[g]).to_list() for g in sel.groups[:1000]]
        record["groups_listed"] = min(len(sel.groups), 1000)
    return record


def doubt_summary(values: np.ndarray, task: str = "classification") -> dict[str, Any]:
    """How the doubt score is spread over the rows a label-noise stage scored.

    Examples
    --------
    >>> d = doubt_summary(np.array([0.1, 0.6, 0.95, np.nan]))
    >>> d["rows_scored"], d["at_least"], round(d["mean"], 3)
    (3, {'0.5': 2, '0.75': 1, '0.9': 1}, 0.55)
    >>> doubt_summary(np.array([0.2, 1.5, 4.0]), "regression")["at_least"]
    {'1': 2, '2': 1, '3': 1}
    """
    levels = REGRESSION_DOUBT_LEVELS if task == "regression" else DOUBT_LEVELS
    scored = values[np.isfinite(values)]
    quantiles = (np.quantile(scored, (0.5, 0.9, 0.99)).tolist() if len(scored)
                 else [None, None, None])
    return {"rows_scored": int(len(scored)),
            "mean": float(scored.mean()) if len(scored) else None,
            "median": quantiles[0], "q90": quantiles[1], "q99": quantiles[2],
            "at_least": {f"{level:g}": int(np.sum(scored >= level)) for level in levels},
            "measure": DOUBT_MEASURES[task]}


def build_summary(prep: Prepared, outcomes: list[StageOutcome], kept_positions: np.ndarray,
                  audit: pl.DataFrame, seconds: float) -> dict[str, Any]:
    """Assemble the summary of one run, from the same objects the run folder is written from.

    ``kept_positions`` are the input positions of the kept rows; every other
    input row is removed (and has its row in ``audit``).
    """
    spec = prep.spec
    label = spec.input.label
    quarantined = int((~prep.valid).sum())
    regression = prep.task.task == "regression"
    kept_labels = prep.frame[label].gather(kept_positions)
    summary: dict[str, Any] = {
        "rows_in": prep.frame.height,
        "rows_kept": len(kept_positions),
        "rows_removed": prep.frame.height - len(kept_positions),
        "rows_quarantined": quarantined,
        "by_reason": dict(sorted(Counter(audit["reason"].to_list()).items())),
        "classes_in": {} if regression else _counts(
            prep.frame[label].cast(pl.String).fill_null("<missing>").to_numpy()),
        "classes_kept": {} if regression else _counts(
            kept_labels.cast(pl.String).fill_null("<missing>").to_numpy()),
        "task": prep.task.as_dict(),
        "stages": [_stage_record(prep, out) for out in outcomes],
        "input": str(spec.input.path),
        "input_sha256": file_sha256(spec.input.path),
        # absolute, as "input" is: `curate review` names paths relative to the pipeline's folder
        "pipeline": str(Path(spec.source).resolve()) if Path(spec.source).is_file() else spec.source,
        "pipeline_sha256": spec.sha256,
        "seed": spec.run.seed,
        "label": label,
        "id": spec.input.id,
        "features": prep.features,
        "space": {"scale": spec.space.scale, "distance": spec.space.distance,
                  "missing": spec.space.missing, "columns": len(prep.space.columns),
                  "weights": _jsonable(getattr(prep.space, "weights", None) or spec.space.weights)},
        "engine": {"requested": spec.run.engine.backend, "memory_mb": spec.run.engine.memory_mb,
                   "cluster": spec.run.engine.cluster_address},
        "protected": len(prep.protected),
        "seconds": round(seconds, 4),
        "versions": versions(),
    }
    if regression:
        kept_rows = np.isin(prep.valid_positions, kept_positions)
        summary["target"] = {"unit": spec.input.unit,
                             "before": describe_target(prep.space_labels),
                             "after": describe_target(prep.space_labels[kept_rows])}
    return summary
