"""Hart's CNN: curate against imbalanced-learn's CondensedNearestNeighbour, then curate alone larger.

Targets (from the issue): at 10,000 rows x 20 columns, 3 classes, curate's CNN
at least 100 times faster than imbalanced-learn's (which refits its 1-NN after
every added row); 100,000 rows in under a minute; the result consistent (1-NN
over the kept rows, scikit-learn's KNeighborsClassifier, labels every row right).

imbalanced-learn's CondensedNearestNeighbour is run with
``sampling_strategy="all"`` and ``n_neighbors=None`` (its 1-NN rule). It is not
the same procedure: it condenses each class against the smallest class, one
class at a time, in one pass; curate runs Hart's passes over all classes
until one adds nothing. The timing compares the two ways of doing the job.

Run: ``.venv/bin/python benchmarks/bench_cnn.py [--rows 10000] [--large 100000]``
on a quiet machine (outside load distorts the figures: report ratios).
"""

from __future__ import annotations

import argparse
import resource
import sys
import time
from pathlib import Path

import numpy as np
from threadpoolctl import threadpool_limits

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from curate.methods._store import LIST_LENGTH  # noqa: E402
from curate.methods.condensing import cnn  # noqa: E402
from curate.neighbours import kneighbors  # noqa: E402
from curate.space import Space  # noqa: E402


def data(rows: int, cols: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """The shared benchmark data when benchmarks/common.py has it, else the same kind here."""
    try:
        from benchmarks.common import make_data  # type: ignore[import-not-found]
    except ImportError:
        from sklearn.datasets import make_classification
        from sklearn.preprocessing import MinMaxScaler

        X, y = make_classification(n_samples=rows, n_features=cols, n_informative=cols // 2,
                                   n_classes=3, random_state=seed)
        return MinMaxScaler().fit_transform(X), y
    X, y = make_data(rows, cols=cols, classes=3, seed=seed)
    return np.asarray(X, dtype=np.float64), np.asarray(y)


def inconsistent(X: np.ndarray, y: np.ndarray, kept: np.ndarray) -> int:
    """Rows that scikit-learn's 1-NN, fitted on the kept rows, labels wrongly (Hart 1968)."""
    from sklearn.neighbors import KNeighborsClassifier

    knn = KNeighborsClassifier(n_neighbors=1).fit(X[kept], y[kept])
    return int(sum((knn.predict(X[a:a + 5000]) != y[a:a + 5000]).sum()
                   for a in range(0, len(y), 5000)))


def run_curate(X: np.ndarray, y: np.ndarray) -> dict[str, float]:
    """Time the neighbour lists alone, then the whole CNN (which builds them again)."""
    space = Space.from_matrix(X)
    start = time.perf_counter()
    kneighbors(space, min(LIST_LENGTH, len(y) - 1))
    lists = time.perf_counter() - start
    start = time.perf_counter()
    sel = cnn(space, y, removable=np.ones(len(y), bool), seed=0)
    total = time.perf_counter() - start
    return {"seconds": total, "lists": lists, "kept": len(sel.kept),
            "passes": sel.info["passes"], "wrong": inconsistent(X, y, sel.kept)}


def run_imblearn(X: np.ndarray, y: np.ndarray) -> dict[str, float]:
    """imbalanced-learn's CondensedNearestNeighbour, every class condensed, 1-NN."""
    from imblearn.under_sampling import CondensedNearestNeighbour

    ref = CondensedNearestNeighbour(sampling_strategy="all", n_neighbors=None, random_state=0)
    start = time.perf_counter()
    ref.fit_resample(X, y)
    seconds = time.perf_counter() - start
    kept = np.sort(ref.sample_indices_)
    return {"seconds": seconds, "kept": len(kept), "wrong": inconsistent(X, y, kept)}


def main() -> None:
    """Run both sizes and print the figures and whether the targets are met."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=10_000)
    parser.add_argument("--large", type=int, default=100_000)
    parser.add_argument("--cols", type=int, default=20)
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args()
    # One BLAS thread for both libraries: on a shared 2-core machine thread pools
    # oversubscribe and distort the comparison.
    with threadpool_limits(1):
        compare(args)


def compare(args: argparse.Namespace) -> None:
    """The two comparisons, with the figures printed as they come."""

    # Large enough that the neighbour engine takes its compiled path too.
    warm_x, warm_y = data(3000, args.cols, args.seed + 1)
    start = time.perf_counter()
    cnn(Space.from_matrix(warm_x), warm_y, removable=np.ones(len(warm_y), bool))
    print(f"warm-up (compiled kernels loaded or built): {time.perf_counter() - start:.1f} s")

    X, y = data(args.rows, args.cols, args.seed)
    ours = run_curate(X, y)
    print(f"curate CNN   {args.rows:>7} rows: {ours['seconds']:8.2f} s (neighbour lists "
          f"{ours['lists']:.2f} s), kept {ours['kept']}, passes {ours['passes']}, "
          f"rows 1-NN gets wrong: {ours['wrong']}")
    theirs = run_imblearn(X, y)
    print(f"imblearn CNN {args.rows:>7} rows: {theirs['seconds']:8.2f} s, kept {theirs['kept']}, "
          f"rows 1-NN gets wrong: {theirs['wrong']}")
    ratio = theirs["seconds"] / ours["seconds"]
    print(f"ratio imblearn / curate: {ratio:.1f}x -> target (>= 100x) "
          f"{'met' if ratio >= 100 else 'not met'}")

    X, y = data(args.large, args.cols, args.seed)
    big = run_curate(X, y)
    print(f"curate CNN   {args.large:>7} rows: {big['seconds']:8.2f} s (neighbour lists "
          f"{big['lists']:.2f} s), kept {big['kept']}, passes {big['passes']}, "
          f"rows 1-NN gets wrong: {big['wrong']}")
    fast = big["seconds"] < 60
    print(f"{args.large} rows under 60 s: {'target met' if fast else 'target not met'}; "
          f"consistent: {'yes' if big['wrong'] == 0 and ours['wrong'] == 0 else 'no'}")
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak memory of this process: {peak:.0f} MiB")


if __name__ == "__main__":
    main()
