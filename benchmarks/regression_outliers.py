"""How well the regression stages find injected outliers on open regression tables.

Not a speed benchmark: a measurement for the README. On scikit-learn's bundled
diabetes set (442 rows, 10 columns) and palmerpenguins' body mass (342 rows
with bill and flipper measurements), features range-normalised, a seeded share
of targets is moved by 3 to 5 standard deviations
(:func:`curate.evaluation.regression_stats.inject_outliers`); each stage runs on the
whole table and its removals are scored against the moved rows. Precision and
recall are summed over seeds 0 to 4.

Then each row is ranked by the committee's doubt and by the hardness score, and
the ranking is scored by scikit-learn's average precision of the moved rows.

Run: ``.venv/bin/python benchmarks/regression_outliers.py [--share 0.05 0.1]``
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Iterator
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))


from curate.evaluation.regression_stats import inject_outliers  # noqa: E402
from curate.methods import REGRESSION_METHODS  # noqa: E402
from curate.methods.base import Selection  # noqa: E402
from curate.methods.reg_noise import reg_committee  # noqa: E402
from curate.methods.regression import reg_enn, regression_hardness  # noqa: E402
from curate.space.points import Space  # noqa: E402

Stage = Callable[[Space, np.ndarray], Selection]
STAGES: dict[str, Stage] = {
    "reg-enn (k 9, alpha 3)": lambda s, y: reg_enn(s, y, removable=np.ones(s.n, bool)),
    "reg-enn (k 15, alpha 2)": lambda s, y: reg_enn(s, y, removable=np.ones(s.n, bool), k=15,
                                                    alpha=2.0),
    "hardness (k 9, threshold 2)": lambda s, y: regression_hardness(
        s, y, removable=np.ones(s.n, bool), k=9, threshold=2.0),
    "discretized (3 bins, enn k 9)": lambda s, y: REGRESSION_METHODS["discretized"].func(
        s, y, removable=np.ones(s.n, bool), bins=3, params={"k": 9}),
    "committee (defaults)": lambda s, y: reg_committee(s, y, removable=np.ones(s.n, bool)),
    "committee (majority)": lambda s, y: reg_committee(s, y, removable=np.ones(s.n, bool),
                                                       vote="majority"),
}


def tables() -> Iterator[tuple[str, np.ndarray, np.ndarray]]:
    from palmerpenguins import load_penguins
    from sklearn.datasets import load_diabetes

    x, y = load_diabetes(return_X_y=True)
    yield "diabetes", x, y
    columns = ["bill_length_mm", "bill_depth_mm", "flipper_length_mm"]
    frame = load_penguins().dropna(subset=[*columns, "body_mass_g"])
    yield "penguins body mass", frame[columns].to_numpy(float), frame["body_mass_g"].to_numpy(float)


def main() -> None:
    from sklearn.metrics import average_precision_score
    from sklearn.preprocessing import MinMaxScaler

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--share", type=float, nargs="+", default=[0.05, 0.1])
    args = parser.parse_args()
    print(f"{'table':<20}{'share':>6}  {'stage':<32}{'removed':>8}{'precision':>10}{'recall':>8}")
    for name, x, y in tables():
        space = Space.from_matrix(MinMaxScaler().fit_transform(x))
        for share in args.share:
            for stage, run in STAGES.items():
                removed = found = moved_total = 0
                for seed in range(5):
                    noisy, moved = inject_outliers(y, share, seed)
                    gone = run(space, noisy).removed
                    removed += len(gone)
                    found += int(moved[gone].sum())
                    moved_total += int(moved.sum())
                print(f"{name:<20}{share:>6.0%}  {stage:<32}{removed:>8}"
                      f"{found / max(removed, 1):>10.2f}{found / moved_total:>8.2f}")
    print("\nranking rows by score: average precision of the moved rows (mean over seeds 0 to 4)")
    print(f"{'table':<20}{'share':>6}  {'committee doubt':>16}{'hardness (k 9)':>16}")
    for name, x, y in tables():
        space = Space.from_matrix(MinMaxScaler().fit_transform(x))
        for share in args.share:
            doubt, hard = [], []
            for seed in range(5):
                noisy, moved = inject_outliers(y, share, seed)
                every = np.ones(space.n, bool)
                doubt.append(average_precision_score(moved, reg_committee(
                    space, noisy, removable=every, action="report").scores["doubt"]))
                hard.append(average_precision_score(moved, regression_hardness(
                    space, noisy, removable=every, k=9).scores["hardness"]))
            print(f"{name:<20}{share:>6.0%}  {np.mean(doubt):>16.3f}{np.mean(hard):>16.3f}")


if __name__ == "__main__":
    main()
