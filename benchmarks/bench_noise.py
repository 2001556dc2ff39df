"""Label noise: how well each method finds flipped labels on open tables, and its scale.

For every table in ``benchmarks/noise_tables.py`` (eight tables that packages
ship, three with overlapping classes: glass, diabetes screening, crabs), every
flip pattern (10% and 20% uniform, 20% pair flips towards the next class) and
5 seeds, it runs ENN (k = 3), kDN (k = 5, removing rows with kDN >= 0.6) and
each label-noise method with its defaults (``committee`` also as Brodley and
Friedl's majority filter as published: ``vote = "majority"``, ``min_doubt = 0``),
and scores the flagged rows against the flipped ones: precision,
recall, F1, and the average precision (scikit-learn's
``average_precision_score``) of the method's ranking (the doubt score; kDN's
score; ENN's removals, which rank only removed above kept). Figures are means
over the seeds, then over the tables.

Targets (issue 12), at 10% uniform flips:

* the default ``committee``: mean precision >= 0.80 at mean recall >= 0.80;
* the doubt ranking's average precision >= kDN's and ENN's on every table,
  and its mean >= 0.85;
* scale: the default ``committee`` on 1,000,000 rows x 20 numeric columns
  (3 classes, 10% flips) in <= 10 minutes with peak memory <= 4 GB.

Run: ``.venv/bin/python benchmarks/bench_noise.py [--tables iris,glass]
[--flips uniform-10] [--seeds 5] [--rows 1000000 | --rows 0]`` (``--rows 0``
skips the scale run; ``--skip-tables`` runs only it). Run it on a quiet
machine: outside load stretches the scale run's time.
"""

from __future__ import annotations

import argparse
import sys
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from benchmarks.common import load_note, make_data, measure, target_line  # noqa: E402
from benchmarks.noise_tables import FLIPS, TABLES, flip, load  # noqa: E402
from curate.methods.editing import enn  # noqa: E402
from curate.methods.noise import class_thresholds, committee, ipf  # noqa: E402
from curate.methods.scores import hardness  # noqa: E402
from curate.space import Space  # noqa: E402

Method = Callable[[Space, np.ndarray, int], tuple[np.ndarray, np.ndarray]]


def _flags(n: int, positions: np.ndarray) -> np.ndarray:
    mask = np.zeros(n, dtype=bool)
    mask[positions] = True
    return mask


def _noise(func: Callable[..., Any], **params: Any) -> Method:
    def run(space: Space, y: np.ndarray, seed: int) -> tuple[np.ndarray, np.ndarray]:
        sel = func(space, y, removable=np.ones(len(y), bool), seed=seed, **params)
        return _flags(len(y), sel.removed), sel.scores["doubt"]
    return run


def _enn(space: Space, y: np.ndarray, seed: int) -> tuple[np.ndarray, np.ndarray]:
    flags = _flags(len(y), enn(space, y, removable=np.ones(len(y), bool), k=3).removed)
    return flags, flags.astype(np.float64)


def _kdn(space: Space, y: np.ndarray, seed: int) -> tuple[np.ndarray, np.ndarray]:
    sel = hardness(space, y, removable=np.ones(len(y), bool), k=5, threshold=0.6)
    return _flags(len(y), sel.removed), sel.scores["hardness"]


METHODS: dict[str, Method] = {
    "enn": _enn,
    "kdn": _kdn,
    "committee": _noise(committee),
    "majority-filter": _noise(committee, vote="majority", min_doubt=0.0),
    "class-thresholds": _noise(class_thresholds),
    "ipf": _noise(ipf),
}


def scores(flags: np.ndarray, ranking: np.ndarray, truth: np.ndarray) -> np.ndarray:
    """Precision, recall, F1 of ``flags`` and average precision of ``ranking``.

    Examples
    --------
    >>> scores(np.array([1, 0, 0], bool), np.array([0.9, 0.5, 0.1]), np.array([1, 1, 0], bool))
    array([1.        , 0.5       , 0.66666667, 1.        ])
    """
    from sklearn.metrics import average_precision_score

    found = int(np.sum(flags & truth))
    precision = found / max(int(flags.sum()), 1)
    recall = found / max(int(truth.sum()), 1)
    f1 = 2 * precision * recall / (precision + recall) if found else 0.0
    return np.array([precision, recall, f1, average_precision_score(truth, ranking)])


def run_tables(tables: list[str], flips: list[str], seeds: int
               ) -> dict[tuple[str, str, str], np.ndarray]:
    """Mean (precision, recall, F1, AP) over seeds per (flip pattern, method, table)."""
    out: dict[tuple[str, str, str], np.ndarray] = {}
    for name in tables:
        X, y0 = load(name)
        space = Space.from_matrix(X)
        for pattern in flips:
            rows: dict[str, list[np.ndarray]] = {m: [] for m in METHODS}
            for seed in range(seeds):
                y, truth = flip(y0, pattern, seed)
                for method, func in METHODS.items():
                    rows[method].append(scores(*func(space, y, seed), truth))
            for method, values in rows.items():
                out[(pattern, method, name)] = np.mean(values, axis=0)
            print(f"  done {name} {pattern}", file=sys.stderr, flush=True)
    return out


def print_tables(res: dict[tuple[str, str, str], np.ndarray], tables: list[str],
                 flips: list[str]) -> None:
    for pattern in flips:
        print(f"\n{pattern}: precision / recall / F1 / average precision of the ranking "
              "(mean over seeds)")
        print(f"{'table':<20}" + "".join(f"{m:>29}" for m in METHODS))
        for name in [*tables, "MEAN"]:
            cells = []
            for method in METHODS:
                v = (np.mean([res[(pattern, method, t)] for t in tables], axis=0)
                     if name == "MEAN" else res[(pattern, method, name)])
                cells.append(f"{v[0]:8.2f}{v[1]:6.2f}{v[2]:6.2f}{v[3]:6.2f}   ")
            print(f"{name:<20}" + "".join(f"{c:>29}" for c in cells))


def check_targets(res: dict[tuple[str, str, str], np.ndarray], tables: list[str]) -> None:
    key = "uniform-10"
    if not any(k[0] == key for k in res):
        return
    mean = np.mean([res[(key, "committee", t)] for t in tables], axis=0)
    print(target_line("committee precision >= 0.80 at recall >= 0.80",
                      bool(mean[0] >= 0.8 and mean[1] >= 0.8),
                      f"mean precision {mean[0]:.3f}, recall {mean[1]:.3f}"))
    worse = [t for t in tables for other in ("kdn", "enn")
             if res[(key, "committee", t)][3] < res[(key, other, t)][3]]
    print(target_line("doubt AP >= kDN's and ENN's on every table", not worse,
                      "below on: " + ", ".join(sorted(set(worse))) if worse else
                      "on all " + str(len(tables))))
    print(target_line("doubt AP mean >= 0.85", bool(mean[3] >= 0.85), f"mean {mean[3]:.3f}"))


def run_scale(rows: int) -> None:
    """The default committee on ``rows`` x 20 numeric columns, 3 classes, 10% flips."""
    X, y0 = make_data(rows, cols=20, classes=3, seed=0)
    y, truth = flip(y0, "uniform-10", 0)
    space = Space.from_matrix(X)
    print(f"\nscale: default committee on {rows:,} rows x 20 columns, 3 classes, 10% flips; "
          f"{load_note()}")
    committee(space.subset(np.arange(min(rows, 3000))), y[:3000],
              removable=np.ones(min(rows, 3000), bool))  # compile the engine (cached after)
    m = measure(committee, space, y, removable=np.ones(rows, bool))
    p, r, f1, ap = scores(_flags(rows, m.result.removed), m.result.scores["doubt"], truth)
    total = _peak_total_mb()
    print(f"committee: {m.seconds:.1f} s wall, {m.cpu_seconds:.1f} s cpu, peak +{m.peak_mb:.0f} "
          f"MiB over the data ({total:.0f} MiB for the whole process); precision {p:.3f}, "
          f"recall {r:.3f}, F1 {f1:.3f}, AP {ap:.3f}")
    if rows >= 1_000_000:
        print(target_line("1,000,000 x 20 in <= 10 min, peak <= 4 GB",
                          m.seconds <= 600 and total <= 4096,
                          f"{m.seconds / 60:.1f} min, {total / 1024:.2f} GiB"))


def _peak_total_mb() -> float:
    try:
        with open("/proc/self/status") as status:
            for line in status:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) / 1024
    except OSError:
        pass
    return float("nan")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--tables", default=",".join(TABLES))
    parser.add_argument("--flips", default=",".join(FLIPS))
    parser.add_argument("--seeds", type=int, default=5)
    parser.add_argument("--rows", type=int, default=1_000_000,
                        help="rows of the scale run (0 skips it)")
    parser.add_argument("--skip-tables", action="store_true")
    args = parser.parse_args()
    tables, flips = args.tables.split(","), args.flips.split(",")
    if not args.skip_tables:
        started = time.perf_counter()
        print(f"{len(tables)} tables x {len(flips)} flip patterns x {args.seeds} seeds; "
              f"{load_note()}")
        res = run_tables(tables, flips, args.seeds)
        print_tables(res, tables, flips)
        check_targets(res, tables)
        print(f"tables took {time.perf_counter() - started:.0f} s")
    if args.rows:
        run_scale(args.rows)


if __name__ == "__main__":
    main()
