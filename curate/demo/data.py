"""An invented demo scenario: sensor snapshots of a pump fleet, with known faults.

Every name here is invented: the sites, the pump model codes and the notes
describe no real place, product or person. Each row is one sensor snapshot of
one pump, labelled by a field technician with a condition class. The sensors
follow a rough physics sketch (load drives flow, head and current; each fault
bends them its own way) with overlap between classes, and the data carries
seeded faults that curate should find:

- ``label-flip``: the technician chose a wrong but plausible class;
- ``re-sent``: a full copy of an earlier row under a new ``reading_id``;
- ``schema``: one sensor out of its physical range (never a missing value);
- ``conflict``: an earlier row's sensor values re-sent with another label.

:func:`generate` returns the readings and the ground truth (one row per
injected fault); :func:`write` stores both as files.
"""

from __future__ import annotations

import os
from pathlib import Path
from types import MappingProxyType

import numpy as np
import polars as pl

from curate.errors import UsageError

__all__ = ["CONDITIONS", "FAULT_SHARES", "FEATURES", "MODELS", "RANGES", "SHIFTS", "SITES",
           "generate", "write"]

# Site profiles: (suction pressure kPa gauge, ambient temperature C, cavitation weight).
# The low-suction river intake sees more cavitation, as a real low-head intake would.
_SITES = MappingProxyType({
    "north-yard": (180.0, 14.0, 1.0),
    "river-intake": (95.0, 17.0, 2.2),
    "tank-farm-b": (250.0, 21.0, 0.7),
    "quarry-east": (140.0, 27.0, 1.0),
})
# Model profiles: (rated flow m3/h, rated pressure rise kPa, rated current A, bearing-wear weight).
_MODELS = MappingProxyType({
    "QZ-11": (40.0, 450.0, 18.0, 1.0),
    "QZ-14": (80.0, 600.0, 32.0, 1.0),
    "VR-7": (150.0, 380.0, 45.0, 1.8),
    "MT-30": (30.0, 1400.0, 28.0, 0.8),
})
SITES: tuple[str, ...] = tuple(_SITES)
MODELS: tuple[str, ...] = tuple(_MODELS)
SHIFTS: tuple[str, ...] = ("early", "late", "night")
_SHIFT_AMBIENT = (0.0, 3.0, -4.0)
_SHIFT_LOAD = (1.0, 1.0, 0.9)
CONDITIONS: tuple[str, ...] = ("healthy", "cavitation", "bearing-wear", "seal-leak",
                               "impeller-damage")
_PRIOR = np.array([0.75, 0.08, 0.08, 0.06, 0.03])
# Technician mistakes go to plausible neighbours: row = true class, column = given class.
_CONFUSION = np.array([
    [0.00, 0.25, 0.40, 0.30, 0.05],
    [0.35, 0.00, 0.20, 0.00, 0.45],
    [0.55, 0.20, 0.00, 0.00, 0.25],
    [0.50, 0.20, 0.00, 0.00, 0.30],
    [0.25, 0.45, 0.00, 0.30, 0.00],
])
FAULT_SHARES = MappingProxyType({"label-flip": 0.08, "re-sent": 0.03, "schema": 0.003,
                                 "conflict": 0.005})
FEATURES: tuple[str, ...] = ("site", "pump_model", "shift", "vibration_mm_s", "bearing_temp_c",
                             "suction_kpa", "discharge_kpa", "flow_m3_h", "motor_current_a")
# Physical ranges (inclusive) that clean rows stay strictly inside; schema/readings.py checks them.
RANGES = MappingProxyType({
    "vibration_mm_s": (0.0, 80.0),
    "bearing_temp_c": (-20.0, 150.0),
    "suction_kpa": (-100.0, 600.0),
    "discharge_kpa": (0.0, 2500.0),
    "flow_m3_h": (0.0, 400.0),
    "motor_current_a": (0.0, 200.0),
})
_DECIMALS = MappingProxyType({"vibration_mm_s": 2, "bearing_temp_c": 1, "suction_kpa": 1,
                              "discharge_kpa": 1, "flow_m3_h": 1, "motor_current_a": 2})
# One way to break the schema per kind: (column, how a broken value is drawn).
_BREAKS = (
    ("vibration_mm_s", lambda rng: -round(float(rng.uniform(0.5, 5.0)), 2)),
    ("bearing_temp_c", lambda rng: 900.0),
    ("suction_kpa", lambda rng: -round(float(rng.uniform(150.0, 400.0)), 1)),
    ("discharge_kpa", lambda rng: 9999.0),
)
_NOTES = MappingProxyType({
    "healthy": ("routine round", "no remarks", "checked, running smooth", "weekly walk-by"),
    "cavitation": ("gravel noise at inlet", "pressure gauge hunting", "crackling sound",
                   "inlet strainer looked dirty"),
    "bearing-wear": ("housing warm to touch", "grinding at drive end", "grease looked dark",
                     "rumble at low speed"),
    "seal-leak": ("drips under the seal", "wet floor near pump", "topped up flush line",
                  "seal area damp"),
    "impeller-damage": ("output down since last month", "motor labouring", "uneven hum",
                        "flow below setpoint"),
})


def _context(rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
    """Draw site, model, shift and the true condition (as codes) for ``n`` rows."""
    site = rng.integers(len(SITES), size=n)
    model = rng.integers(len(MODELS), size=n)
    shift = rng.integers(len(SHIFTS), size=n)
    # Site and model shift the class priors, then each row draws from its own prior.
    weights = np.tile(_PRIOR, (n, 1))
    weights[:, 1] *= np.array([p[2] for p in _SITES.values()])[site]
    weights[:, 2] *= np.array([p[3] for p in _MODELS.values()])[model]
    weights /= weights.sum(axis=1, keepdims=True)
    cls = (rng.random(n)[:, None] > np.cumsum(weights, axis=1)).sum(axis=1)
    return {"site": site, "model": model, "shift": shift, "condition": cls}


def _healthy(rng: np.random.Generator, ctx: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Sensors of a sound pump: load drives flow, pressure rise, current and heat."""
    n = len(ctx["site"])
    site = np.array(list(_SITES.values()))[ctx["site"]]
    model = np.array(list(_MODELS.values()))[ctx["model"]]
    load = rng.uniform(0.55, 1.1, n) * np.array(_SHIFT_LOAD)[ctx["shift"]]
    suction = site[:, 0] * (1 + 0.08 * rng.standard_normal(n))
    return {
        "load": load,
        "suction": suction,
        # Pressure rise falls with flow along a centrifugal pump curve.
        "rise": model[:, 1] * (1.25 - 0.3 * load**2) * (1 + 0.03 * rng.standard_normal(n)),
        "flow": model[:, 0] * load * (1 + 0.03 * rng.standard_normal(n)),
        "current": model[:, 2] * (0.35 + 0.65 * load) * (1 + 0.03 * rng.standard_normal(n)),
        "vibration": np.exp(np.log(1.6 + 1.4 * load) + 0.25 * rng.standard_normal(n)),
        "temp": (site[:, 1] + np.array(_SHIFT_AMBIENT)[ctx["shift"]] + 28 + 14 * load
                 + 2.5 * rng.standard_normal(n)),
    }


def _apply_faults(rng: np.random.Generator, s: dict[str, np.ndarray], cls: np.ndarray) -> None:
    """Bend the sensors of faulty pumps in place, each by a random severity."""
    n = len(cls)
    sev = rng.beta(2.0, 2.5, n)
    noise = np.exp(0.5 * rng.standard_normal(n))
    m = cls == 1  # cavitation: low suction, noisy vibration, some head and flow lost
    s["suction"][m] *= 0.15 + 0.45 * (1 - sev[m])
    s["vibration"][m] = s["vibration"][m] * noise[m] + 1.5 + 5 * sev[m]
    s["flow"][m] *= 1 - 0.12 * sev[m]
    s["rise"][m] *= 1 - 0.2 * sev[m] * noise[m]
    m = cls == 2  # bearing wear: vibration and bearing heat up, a little more current
    s["vibration"][m] += (2 + 9 * sev[m]) * np.sqrt(noise[m])
    s["temp"][m] += 6 + 28 * sev[m]
    s["current"][m] *= 1 + 0.05 * sev[m]
    m = cls == 3  # seal leak: flow and pressure rise drop, the motor works less
    s["flow"][m] *= 1 - (0.1 + 0.3 * sev[m])
    s["rise"][m] *= 1 - (0.08 + 0.22 * sev[m])
    s["current"][m] *= 1 - 0.08 * sev[m]
    m = cls == 4  # impeller damage: current up while flow and head fall, imbalance shakes
    s["current"][m] *= 1.15 + 0.35 * sev[m]
    s["flow"][m] *= 1 - (0.15 + 0.25 * sev[m])
    s["rise"][m] *= 1 - (0.15 + 0.3 * sev[m])
    s["vibration"][m] += 1.5 + 4 * sev[m]


def _readings(rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
    """Draw ``n`` clean rows as named columns (codes for the nominal ones)."""
    ctx = _context(rng, n)
    s = _healthy(rng, ctx)
    _apply_faults(rng, s, ctx["condition"])
    raw = {"vibration_mm_s": s["vibration"], "bearing_temp_c": s["temp"],
           "suction_kpa": s["suction"], "discharge_kpa": s["suction"] + s["rise"],
           "flow_m3_h": s["flow"], "motor_current_a": s["current"]}
    out = dict(ctx)
    for name, values in raw.items():
        low, high = RANGES[name]
        # Clean rows stay strictly inside the range so that only injected rows break it.
        step = 10.0 ** -_DECIMALS[name]
        out[name] = np.round(np.clip(values, low + step, high - step), _DECIMALS[name])
    picks = rng.integers(4, size=n)
    out["note"] = np.array([_NOTES[CONDITIONS[c]][p] for c, p in zip(out["condition"], picks,
                                                                     strict=True)])
    return out


def _confuse(rng: np.random.Generator, cls: np.ndarray) -> np.ndarray:
    """Draw a wrong but plausible class for each true class code."""
    cum = np.cumsum(_CONFUSION[cls], axis=1)
    return (rng.random(len(cls))[:, None] > cum).sum(axis=1)


def _counts(rows: int) -> dict[str, int]:
    """Number of rows of each fault kind for a table of ``rows`` rows."""
    if not isinstance(rows, int) or isinstance(rows, bool) or rows < 100:
        raise UsageError(f"demo rows must be an integer >= 100, got {rows!r}",
                         hint="ask for at least 100 rows, for example rows=2000")
    return {kind: int(round(share * rows)) for kind, share in FAULT_SHARES.items()}


def _break_schema(rng: np.random.Generator, base: dict[str, np.ndarray],
                  positions: np.ndarray) -> list[str]:
    """Push one sensor of each chosen row out of its range; say what was done."""
    details = []
    for i, pos in enumerate(np.sort(positions)):
        column, draw = _BREAKS[i % len(_BREAKS)]
        base[column][pos] = draw(rng)
        low, high = RANGES[column]
        details.append(f"{column} = {base[column][pos]} (allowed {low} to {high})")
    return details


_Columns = dict[str, np.ndarray]


def _base_with_faults(rng: np.random.Generator, n_base: int,
                      counts: dict[str, int]) -> tuple[_Columns, _Columns]:
    """Draw the original rows, pick disjoint fault rows and apply flips and broken values.

    Returns the base columns (``given`` holds the technician's label codes) and
    the plan: positions per fault kind, and the schema rows' details.
    """
    base = _readings(rng, n_base)
    cuts = np.cumsum([counts["schema"], counts["label-flip"], counts["re-sent"],
                      counts["conflict"]])
    chosen = rng.permutation(n_base)[: cuts[-1]]
    schema, flip, resent, conflict = np.split(chosen, cuts[:-1])
    base["given"] = base["condition"].copy()
    base["given"][flip] = _confuse(rng, base["condition"][flip])
    details = _break_schema(rng, base, schema)
    plan = {"schema": np.sort(schema), "label-flip": flip, "re-sent": resent,
            "conflict": conflict, "schema-detail": np.array(details, dtype=object)}
    return base, plan


def _with_copies(rng: np.random.Generator, base: dict[str, np.ndarray],
                 plan: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Append the copies after the base rows; mark every row's fault.

    ``index`` maps each row to the base row whose sensor values it carries.
    A re-sent copy repeats its source whole; a conflicting copy repeats the
    sensors under another plausible label, with a note written for that label
    as a second visit would.
    """
    n_base = len(base["given"])
    resent, conflict = plan["re-sent"], plan["conflict"]
    other = _confuse(rng, base["given"][conflict])
    fault = np.full(n_base, "", dtype=object)
    detail = np.full(n_base, "", dtype=object)
    fault[plan["label-flip"]], detail[plan["label-flip"]] = "label-flip", "labelled by mistake"
    fault[plan["schema"]], detail[plan["schema"]] = "schema", plan["schema-detail"]
    copies = len(resent) + len(conflict)
    return {
        "index": np.concatenate([np.arange(n_base), resent, conflict]),
        "given": np.concatenate([base["given"], base["given"][resent], other]),
        "note": np.concatenate([base["note"], base["note"][resent],
                                [_NOTES[CONDITIONS[c]][0] for c in other]]),
        "fault": np.concatenate([fault, ["re-sent"] * len(resent) + ["conflict"] * len(conflict)]),
        "detail": np.concatenate([detail, np.full(copies, "", dtype=object)]),
    }


def _order(rng: np.random.Generator, n_base: int, sources: np.ndarray) -> np.ndarray:
    """Final order of base rows then copies, with every copy placed after its source."""
    key = np.concatenate([np.arange(n_base, dtype=float),
                          sources + rng.uniform(0.5, n_base - sources)])
    return np.argsort(key, kind="stable")


def _truth(ids: np.ndarray, fault: np.ndarray, original: np.ndarray, given: np.ndarray,
           source_id: np.ndarray, detail: np.ndarray) -> pl.DataFrame:
    """One row per injected fault, copies first (so CSV readers see integer source ids)."""
    rows = np.flatnonzero(fault != "")
    rank = {kind: i for i, kind in enumerate(("re-sent", "conflict", "schema", "label-flip"))}
    rows = rows[np.lexsort((ids[rows], np.array([rank[f] for f in fault[rows]])))]
    return pl.DataFrame({
        "reading_id": ids[rows].astype(np.int64),
        "fault": fault[rows].astype(str),
        "original_label": np.array(CONDITIONS)[original[rows]],
        "given_label": np.array(CONDITIONS)[given[rows]],
        "source_id": pl.Series(source_id[rows], dtype=pl.Int64).replace(-1, None),
        "detail": detail[rows].astype(str),
    })


def generate(rows: int = 20000, seed: int = 7) -> tuple[pl.DataFrame, pl.DataFrame]:
    """Draw the pump readings and the ground truth of their injected faults.

    Parameters
    ----------
    rows : int
        Rows in the readings table, copies included (at least 100).
    seed : int
        Seed of the only random generator used; same seed, same frames.

    Returns
    -------
    readings : polars.DataFrame
        ``reading_id``, the :data:`FEATURES`, ``note`` and ``condition``.
    truth : polars.DataFrame
        One row per injected fault: ``reading_id``, ``fault``,
        ``original_label``, ``given_label``, ``source_id`` (the copied
        reading, null unless a copy) and ``detail``.

    Examples
    --------
    >>> readings, truth = generate(rows=500, seed=1)
    >>> readings.height, readings["reading_id"].n_unique()
    (500, 500)
    >>> sorted(truth["fault"].unique())
    ['conflict', 'label-flip', 're-sent', 'schema']
    """
    rng = np.random.default_rng(seed)
    counts = _counts(rows)
    n_base = rows - counts["re-sent"] - counts["conflict"]
    base, plan = _base_with_faults(rng, n_base, counts)
    combined = _with_copies(rng, base, plan)
    sources = combined["index"][n_base:]
    order = _order(rng, n_base, sources)
    ids = 100000 + rng.choice(3 * rows, size=rows, replace=False)
    id_of = np.empty(rows, dtype=np.int64)
    id_of[order] = ids  # reading id of each row before shuffling
    source_id = np.full(rows, -1, dtype=np.int64)
    source_id[n_base:] = id_of[sources]
    combined["detail"][n_base:] = [f"copy of reading {i}" for i in source_id[n_base:]]
    pick = combined["index"][order]
    readings = pl.DataFrame({
        "reading_id": ids.astype(np.int64),
        "site": np.array(SITES)[base["site"][pick]],
        "pump_model": np.array(MODELS)[base["model"][pick]],
        "shift": np.array(SHIFTS)[base["shift"][pick]],
        **{name: base[name][pick] for name in RANGES},
        "note": combined["note"][order].astype(str),
        "condition": np.array(CONDITIONS)[combined["given"][order]],
    })
    truth = _truth(ids, combined["fault"][order], base["condition"][pick], combined["given"][order],
                   source_id[order], combined["detail"][order])
    return readings, truth


def write(folder: str | os.PathLike[str], rows: int = 20000, seed: int = 7,
          fmt: str = "csv") -> dict[str, Path]:
    """Generate the demo and write ``readings`` and ``truth`` files into ``folder``.

    The folder is created if needed; each file is written under a temporary
    name and renamed when complete, so a reader never sees half a file.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     paths = write(tmp, rows=200, seed=3)
    ...     sorted(p.name for p in paths.values())
    ['readings.csv', 'truth.csv']
    """
    if fmt not in ("csv", "parquet"):
        raise UsageError(f"demo file format must be 'csv' or 'parquet', got {fmt!r}",
                         hint="use fmt='csv' (the default) or fmt='parquet'")
    readings, truth = generate(rows, seed)
    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    paths = {}
    for name, frame in (("readings", readings), ("truth", truth)):
        path = out / f"{name}.{fmt}"
        tmp = out / f".{name}.{fmt}.partial"
        if fmt == "csv":
            frame.write_csv(tmp)
        else:
            frame.write_parquet(tmp)
        os.replace(tmp, path)
        paths[name] = path
    return paths
