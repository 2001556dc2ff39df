"""Exact k-nearest-neighbour self-search: curate's engine against scikit-learn and faiss.

Target (from the issue): at 100,000 rows x 20 columns curate's exact engine is
at least 2 times faster than scikit-learn's brute force
(``NearestNeighbors(algorithm="brute")``), with identical neighbours.

Every contender searches the same rows for their ``k`` nearest other rows.
scikit-learn breaks ties in distance its own way, so "identical" is checked
as: the same rows wherever the k-th and (k+1)-th distances differ, and the
same distances everywhere (to 1e-9). curate's backends must agree exactly.
Peak memory is what each call added to the process (see common.py).

Run: ``.venv/bin/python benchmarks/bench_neighbours.py [--rows 100000] [--cols 20] [--k 4]``
on a quiet machine if you can; the figures printed include the load.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from benchmarks.common import load_note, make_data, measure, target_line  # noqa: E402
from curate.neighbours import engine_report, kneighbors  # noqa: E402
from curate.settings import EngineSettings  # noqa: E402
from curate.space import Space  # noqa: E402


def sklearn_brute(X: np.ndarray, k: int) -> tuple[np.ndarray, np.ndarray]:
    from sklearn.neighbors import NearestNeighbors

    return NearestNeighbors(n_neighbors=k, algorithm="brute").fit(X).kneighbors()  # type: ignore[no-any-return]


def curate_search(X: np.ndarray, k: int, backend: str,
                  memory_mb: int) -> tuple[np.ndarray, np.ndarray]:
    space = Space.from_matrix(X, "euclidean", EngineSettings(backend, memory_mb))
    return kneighbors(space, k)


def agree_with_sklearn(ours: tuple[np.ndarray, np.ndarray], theirs: tuple[np.ndarray, np.ndarray],
                       k_plus: tuple[np.ndarray, np.ndarray]) -> int:
    """Rows where the neighbour sets differ although no tie at the k-th distance explains it."""
    (d, i), (sd, si) = ours, theirs
    tied = np.isclose(k_plus[0][:, -1], k_plus[0][:, -2], rtol=1e-9, atol=1e-12)
    differ = (np.sort(i, axis=1) != np.sort(si, axis=1)).any(axis=1)
    assert np.allclose(d, sd, rtol=1e-9, atol=1e-9), "distances differ from scikit-learn's"
    return int((differ & ~tied).sum())


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=100_000)
    parser.add_argument("--cols", type=int, default=20)
    parser.add_argument("--k", type=int, default=4)
    parser.add_argument("--memory-mb", type=int, default=1024)
    parser.add_argument("--skip-faiss", action="store_true")
    parser.add_argument("--approximate", action="store_true",
                        help="also time the approximate backend and measure its recall")
    args = parser.parse_args()
    X, _ = make_data(args.rows, cols=args.cols, seed=0)
    print(f"{args.rows} rows x {args.cols} columns, k = {args.k}; {load_note()}")
    curate_search(X[:2000], args.k, "fast", args.memory_mb)  # compile (cached after)
    runs = {"curate fast": measure(curate_search, X, args.k, "fast", args.memory_mb),
            "scikit-learn brute": measure(sklearn_brute, X, args.k)}
    if not args.skip_faiss:
        runs["curate faiss"] = measure(curate_search, X, args.k, "faiss", args.memory_mb)
    if args.approximate:
        runs["curate approximate"] = measure(curate_search, X, args.k, "approximate",
                                             args.memory_mb)
        space = Space.from_matrix(X, "euclidean", EngineSettings("approximate", args.memory_mb))
        print(f"approximate recall: {engine_report(space, args.k, seed=0).recall:.4f} "
              "(1,000 sampled queries against the exact engine)")
    base = runs["scikit-learn brute"].seconds
    for name, m in runs.items():
        print(f"{name:20s} {m.seconds:8.2f} s wall  {m.cpu_seconds:8.2f} s cpu  "
              f"peak +{m.peak_mb:7.1f} MiB  sklearn/this {base / m.seconds:5.2f}")
    fast = runs["curate fast"].result
    for name in runs:
        if name in ("curate faiss",):
            same = all(np.array_equal(a, b) for a, b in zip(fast, runs[name].result, strict=True))
            print(f"{name} identical to curate fast: {same}")
    k_plus = curate_search(X, args.k + 1, "fast", args.memory_mb)
    unexplained = agree_with_sklearn(fast, runs["scikit-learn brute"].result, k_plus)
    print(f"rows whose neighbours differ from scikit-learn's without a tie: {unexplained}")
    ratio = base / runs["curate fast"].seconds
    print(target_line("exact k-NN at least 2x faster than scikit-learn brute force",
                      ratio >= 2 and unexplained == 0,
                      f"ratio {ratio:.2f}, {unexplained} unexplained differences"))
    print(f"after: {load_note()}")


if __name__ == "__main__":
    main()
