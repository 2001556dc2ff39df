"""RegENN against ENN on the same rows, with the exact and the approximate engine.

Target (from the issue): RegENN is in ENN's speed class, at most 1.2 times
ENN's time on the same rows, at 100,000 and 1,000,000 rows, with the exact
(``fast``) and the approximate engine. Both make one neighbour search of the
same k over the same range-normalised matrix (the script checks that each
made exactly one); ENN votes on the target's three quantile bins, RegENN
compares each target with its neighbours' mean and spread.

Data: scikit-learn's ``make_regression`` (20 columns, half informative,
noise, seeded), features range-normalised.

Run: ``.venv/bin/python benchmarks/bench_regression.py [--rows 100000 1000000] [--k 3]``
on a quiet machine if you can; the figures printed include the load.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from benchmarks.common import load_note, measure, target_line  # noqa: E402
from curate.methods._targets import quantile_bins  # noqa: E402
from curate.methods.editing import enn  # noqa: E402
from curate.methods.regression import reg_enn  # noqa: E402
from curate.neighbours.calls import EngineCall, recording  # noqa: E402
from curate.settings import EngineSettings  # noqa: E402
from curate.space.points import Space  # noqa: E402

LIMIT = 1.2


def make_rows(rows: int, cols: int, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """Range-normalised features and a continuous target with noise."""
    from sklearn.datasets import make_regression
    from sklearn.preprocessing import MinMaxScaler

    x, y = make_regression(n_samples=rows, n_features=cols, n_informative=cols // 2,
                           noise=10.0, random_state=seed)
    return np.ascontiguousarray(MinMaxScaler().fit_transform(x)), y


def run(method: str, space: Space, y: np.ndarray, bins: np.ndarray,
        k: int) -> tuple[int, list[EngineCall]]:
    """Removed rows and the engine calls of one method on the whole table."""
    keep_all = np.ones(space.n, dtype=bool)
    with recording() as calls:
        if method == "enn":
            sel = enn(space, bins, removable=keep_all, k=k)
        else:
            sel = reg_enn(space, y, removable=keep_all, k=k)
    return len(sel.removed), calls


def compare(x: np.ndarray, y: np.ndarray, backend: str, k: int) -> bool:
    space = Space.from_matrix(x, engine=EngineSettings(backend=backend))
    bins = quantile_bins(y, 3)[0]
    small = Space.from_matrix(x[:3000], engine=space.engine)
    for method in ("enn", "reg-enn"):  # compile (cached after)
        run(method, small, y[:3000], bins[:3000], k)
    got = {method: measure(run, method, space, y, bins, k) for method in ("enn", "reg-enn")}
    for method, m in got.items():
        removed, calls = m.result
        recall = min(c.recall for c in calls)
        print(f"  {method:8s} {m.seconds:8.2f} s wall {m.cpu_seconds:8.2f} s cpu  peak "
              f"+{m.peak_mb:7.1f} MiB  removed {removed:8d}  searches {len(calls)}  "
              f"recall {recall:.4f}")
    ratio = got["reg-enn"].seconds / got["enn"].seconds
    cpu = got["reg-enn"].cpu_seconds / got["enn"].cpu_seconds
    once = all(len(m.result[1]) == 1 for m in got.values())
    met = ratio <= LIMIT and once
    print("  " + target_line(f"RegENN <= {LIMIT}x ENN's time, {len(y):,} rows, {backend}", met,
                             f"wall ratio {ratio:.2f}, cpu ratio {cpu:.2f}, one search each: "
                             f"{once}"))
    return met


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, nargs="+", default=[100_000, 1_000_000])
    parser.add_argument("--cols", type=int, default=20)
    parser.add_argument("--k", type=int, default=3)
    parser.add_argument("--backends", nargs="+", default=["fast", "approximate"])
    args = parser.parse_args()
    for rows in args.rows:
        x, y = make_rows(rows, args.cols)
        for backend in args.backends:
            print(f"{rows:,} rows x {args.cols} columns, k = {args.k}, backend {backend}; "
                  f"{load_note()}")
            compare(x, y, backend, args.k)
    print(f"after: {load_note()}")


if __name__ == "__main__":
    main()
