"""The demo's regression variant: hours until the next service of each invented pump.

The same invented fleet as :mod:`curate.demo_data` (sites, pump models,
shifts and sensors drawn the same way), but the target is a number: the hours
a pump ran until it needed service, as the maintenance log recorded them. The
hours follow a rough sketch: each model has its own service interval; vibration,
bearing heat and a fault shorten it; the log adds some spread. Seeded faults
that curate should find:

- ``outlier``: the logged hours are off by several standard deviations (a
  typing slip or a wrong work order): 3 to 5 standard deviations up, or down
  where that stays above zero;
- ``re-sent``: a full copy of an earlier row under a new ``reading_id``;
- ``conflict``: an earlier row's sensor values re-sent with other hours (at
  least two standard deviations away);
- ``schema``: one sensor out of its physical range.

:func:`generate` returns the readings and the ground truth (one row per
injected fault); :func:`write` stores both as files.
"""

from __future__ import annotations

import os
from pathlib import Path
from types import MappingProxyType

import numpy as np
import polars as pl

from curate.demo import data as demo_data
from curate.errors import UsageError

__all__ = ["FAULT_SHARES", "FEATURES", "TARGET", "UNIT", "generate", "write"]

TARGET = "hours_to_service"
UNIT = "h"
FEATURES: tuple[str, ...] = tuple(f for f in demo_data.FEATURES)
FAULT_SHARES = MappingProxyType({"outlier": 0.04, "re-sent": 0.03, "schema": 0.003,
                                 "conflict": 0.005})
# Service interval of each pump model in hours, in demo_data.MODELS order.
_INTERVAL = np.array([2200.0, 1800.0, 1400.0, 2600.0])
# How much of the interval each true condition leaves, in demo_data.CONDITIONS order.
_CONDITION_LEFT = np.array([1.0, 0.45, 0.3, 0.6, 0.4])


def _hours(rng: np.random.Generator, base: dict[str, np.ndarray]) -> np.ndarray:
    """Hours until service: the model's interval, shortened by vibration, heat and faults."""
    wear = np.exp(-0.09 * np.maximum(base["vibration_mm_s"] - 2.0, 0.0)
                  - 0.015 * np.maximum(base["bearing_temp_c"] - 45.0, 0.0))
    hours = (_INTERVAL[base["model"]] * _CONDITION_LEFT[base["condition"]] * wear
             * np.exp(0.12 * rng.standard_normal(len(wear))))
    return np.round(np.maximum(hours, 1.0), 1)


def _counts(rows: int) -> dict[str, int]:
    if not isinstance(rows, int) or isinstance(rows, bool) or rows < 100:
        raise UsageError(f"demo rows must be an integer >= 100, got {rows!r}",
                         hint="ask for at least 100 rows, for example rows=2000")
    return {kind: int(round(share * rows)) for kind, share in FAULT_SHARES.items()}


def _moved(rng: np.random.Generator, hours: np.ndarray, spread: float,
           low: float) -> tuple[np.ndarray, np.ndarray]:
    """Hours moved by ``low`` to ``low + 2`` standard deviations; down only where that stays > 1 h."""
    size = rng.uniform(low, low + 2.0, len(hours)) * spread
    down = (rng.random(len(hours)) < 0.5) & (hours - size > 1.0)
    new = np.round(np.where(down, hours - size, hours + size), 1)
    return new, (new - hours) / spread


def _plan(rng: np.random.Generator, n_base: int, counts: dict[str, int]) -> dict[str, np.ndarray]:
    cuts = np.cumsum([counts["schema"], counts["outlier"], counts["re-sent"], counts["conflict"]])
    schema, outlier, resent, conflict = np.split(rng.permutation(n_base)[: cuts[-1]], cuts[:-1])
    return {"schema": np.sort(schema), "outlier": outlier, "re-sent": resent,
            "conflict": conflict}


def generate(rows: int = 20000, seed: int = 7) -> tuple[pl.DataFrame, pl.DataFrame]:
    """Draw the pump readings with their hours until service, and the ground truth of the faults.

    Returns
    -------
    readings : polars.DataFrame
        ``reading_id``, the :data:`FEATURES` and ``hours_to_service``.
    truth : polars.DataFrame
        One row per injected fault: ``reading_id``, ``fault``,
        ``original_hours``, ``given_hours``, ``source_id`` (the copied reading,
        null unless a copy) and ``detail``.

    Examples
    --------
    >>> readings, truth = generate(rows=500, seed=1)
    >>> readings.height, readings["reading_id"].n_unique(), readings[TARGET].dtype
    (500, 500, Float64)
    >>> sorted(truth["fault"].unique())
    ['conflict', 'outlier', 're-sent', 'schema']
    """
    rng = np.random.default_rng(seed)
    counts = _counts(rows)
    n_base = rows - counts["re-sent"] - counts["conflict"]
    base = demo_data._readings(rng, n_base)
    true_hours = _hours(rng, base)
    spread = float(np.std(true_hours))
    plan = _plan(rng, n_base, counts)
    given = true_hours.copy()
    detail = np.full(rows, "", dtype=object)
    fault = np.full(rows, "", dtype=object)
    given[plan["outlier"]], sds = _moved(rng, true_hours[plan["outlier"]], spread, 3.0)
    fault[plan["outlier"]] = "outlier"
    detail[plan["outlier"]] = [f"logged hours moved by {s:+.1f} standard deviations" for s in sds]
    fault[plan["schema"]] = "schema"
    detail[plan["schema"]] = demo_data._break_schema(rng, base, plan["schema"])
    resent, conflict = plan["re-sent"], plan["conflict"]
    sources = np.concatenate([resent, conflict])
    other = _moved(rng, given[conflict], spread, 2.0)[0]
    index = np.concatenate([np.arange(n_base), sources])
    hours = np.concatenate([given, given[resent], other])
    original = np.concatenate([true_hours, true_hours[sources]])
    fault[n_base:] = ["re-sent"] * len(resent) + ["conflict"] * len(conflict)
    order = demo_data._order(rng, n_base, sources)
    ids = 100000 + rng.choice(3 * rows, size=rows, replace=False)
    id_of = np.empty(rows, dtype=np.int64)
    id_of[order] = ids
    source_id = np.full(rows, -1, dtype=np.int64)
    source_id[n_base:] = id_of[sources]
    detail[n_base:] = [f"copy of reading {i}" for i in source_id[n_base:]]
    pick = index[order]
    readings = pl.DataFrame({
        "reading_id": ids.astype(np.int64),
        "site": np.array(demo_data.SITES)[base["site"][pick]],
        "pump_model": np.array(demo_data.MODELS)[base["model"][pick]],
        "shift": np.array(demo_data.SHIFTS)[base["shift"][pick]],
        **{name: base[name][pick] for name in demo_data.RANGES},
        TARGET: hours[order],
    })
    marked = np.flatnonzero(fault[order] != "")
    truth = pl.DataFrame({
        "reading_id": ids[marked].astype(np.int64),
        "fault": fault[order][marked].astype(str),
        "original_hours": original[order][marked],
        "given_hours": hours[order][marked],
        "source_id": pl.Series(source_id[order][marked], dtype=pl.Int64).replace(-1, None),
        "detail": detail[order][marked].astype(str),
    }).sort("fault", "reading_id")
    return readings, truth


def write(folder: str | os.PathLike[str], rows: int = 20000, seed: int = 7) -> dict[str, Path]:
    """Generate the regression demo and write ``hours.csv`` and ``hours-truth.csv`` into ``folder``.

    Each file is written under a temporary name and renamed when complete.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     sorted(p.name for p in write(tmp, rows=200, seed=3).values())
    ['hours-truth.csv', 'hours.csv']
    """
    readings, truth = generate(rows, seed)
    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    paths = {}
    for name, frame in (("hours", readings), ("hours-truth", truth)):
        path, tmp = out / f"{name}.csv", out / f".{name}.csv.partial"
        frame.write_csv(tmp)
        os.replace(tmp, path)
        paths[name] = path
    return paths
