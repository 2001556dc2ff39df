"""Start-up of the small commands: `curate --help` and `curate why` on a million-row run.

Targets (issue 10): `curate --help` and `curate why` under 0.5 s of import time (as
``python -X importtime`` reports it: the sum of the top-level entries, so the interpreter's
own start-up is counted too), and `curate why` on a run of a million input rows under 2 s of
wall time for the whole command, measured from outside in a fresh process.

The run folder is written here with polars, in the run-folder layout (kept.parquet with 20
feature columns and ``row_id``, audit.parquet with the audit's columns and three neighbours
per removed row, summary.json): `why` reads nothing else, and a real million-row run takes
minutes to produce. Each command runs ``--repeats`` times; the minimum and the median are
printed, since outside load only ever adds time.

Run: ``.venv/bin/python benchmarks/bench_why.py [--rows 1000000] [--repeats 7]``.
"""

from __future__ import annotations

import argparse
import json
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import polars as pl

KEPT_SHARE = 0.05  # FCNN on the demo keeps about 5%: most rows are in the audit


def write_run(folder: Path, rows: int, seed: int = 0) -> tuple[int, int]:
    """A run folder of ``rows`` input rows; returns (a removed row id, a kept row id)."""
    rng = np.random.default_rng(seed)
    ids = rng.permutation(rows).astype(np.int64) + 100_000
    n_kept = int(rows * KEPT_SHARE)
    kept_ids, removed_ids = ids[:n_kept], ids[n_kept:]
    labels = np.array(["healthy", "cavitation", "bearing-wear", "seal-leak"])
    features = {f"f{j}": rng.normal(size=n_kept) for j in range(20)}
    pl.DataFrame({**features, "label": labels[rng.integers(0, 4, n_kept)],
                  "row_id": kept_ids}).write_parquet(folder / "kept.parquet")
    n = len(removed_ids)
    neighbours = rng.choice(kept_ids, size=(n, 3))

    def lists(values: np.ndarray, dtype: pl.DataType) -> pl.Series:
        return pl.Series(values.ravel()).reshape((n, 3)).cast(pl.List(dtype))

    pl.DataFrame({
        "row_id": removed_ids, "stage": ["condense"] * n, "method": ["fcnn"] * n,
        "reason": ["absorbed"] * n,
        "detail": ["1-NN over the kept rows labels it correctly: its nearest kept row has the "
                   "same label 'healthy', at distance 0.0864"] * n,
        "label": labels[rng.integers(0, 4, n)],
        "neighbour_ids": lists(neighbours, pl.Int64()),
        "neighbour_labels": lists(labels[rng.integers(0, 4, (n, 3))], pl.String()),
        "neighbour_distances": lists(rng.random((n, 3)), pl.Float64()),
        "kept_as": neighbours[:, 0], "step": np.ones(n, dtype=np.int64),
    }).write_parquet(folder / "audit.parquet")
    (folder / "summary.json").write_text(json.dumps({"rows_in": rows, "id": "reading_id"}))
    return int(removed_ids[-1]), int(kept_ids[-1])


def wall(args: list[str], repeats: int) -> tuple[list[float], list[float]]:
    """Wall and CPU seconds (user + system) of the whole command in a fresh process, per run.

    On a loaded machine wall time grows with the load; CPU time much less.
    """
    times, cpu = [], []
    for _ in range(repeats):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        start = time.perf_counter()
        subprocess.run([sys.executable, "-m", "curate", *args], capture_output=True, check=False)
        times.append(time.perf_counter() - start)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpu.append(after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime)
    return times, cpu


def import_seconds(args: list[str], repeats: int) -> list[float]:
    """``-X importtime``: the sum of the top-level entries' cumulative times, per run."""
    totals = []
    for _ in range(repeats):
        done = subprocess.run([sys.executable, "-X", "importtime", "-m", "curate", *args],
                              capture_output=True, text=True, check=False)
        total = 0
        for line in done.stderr.splitlines():
            parts = line.split("|")
            if line.startswith("import time:") and len(parts) == 3 and \
                    parts[1].strip().isdigit() and not parts[2].startswith("  "):
                total += int(parts[1])
        totals.append(total / 1e6)
    return totals


def report(name: str, seconds: list[float], target: float, cpu: list[float] | None = None) -> None:
    best, median = min(seconds), statistics.median(seconds)
    verdict = "met" if best < target else "MISSED"
    used = f"  cpu min {min(cpu):6.3f} s" if cpu else ""
    print(f"{name:<40} min {best:6.3f} s  median {median:6.3f} s{used}  target < {target} s: "
          f"{verdict}")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--repeats", type=int, default=7)
    parser.add_argument("--folder", type=Path, help="write the run folder here and keep it "
                        "(default: a temporary folder)")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        run = args.folder or Path(tmp)
        run.mkdir(parents=True, exist_ok=True)
        start = time.perf_counter()
        removed, kept = write_run(run, args.rows)
        print(f"run folder of {args.rows:,} rows written in {time.perf_counter() - start:.1f} s")
        report("curate --help, import time", import_seconds(["--help"], args.repeats), 0.5)
        report("curate why, import time", import_seconds(["why", str(removed), "--run", str(run)],
                                                         args.repeats), 0.5)
        for what, row in (("a removed row", removed), ("a kept row", kept), ("an unknown id", 7)):
            times, cpu = wall(["why", str(row), "--run", str(run)], args.repeats)
            report(f"curate why {what}, whole command", times, 2.0, cpu)
        times, cpu = wall(["--help"], args.repeats)
        report("curate --help, whole command", times, 2.0, cpu)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
