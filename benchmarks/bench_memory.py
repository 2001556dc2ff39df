"""Peak memory of `curate run` against the memory setting (`--memory-mb`).

The same table and pipeline as ``bench_pipeline.py`` (exact copies, ENN with
k = 3, FCNN; 20 numeric columns, 3 classes, 1 % copies, 5 % flipped labels, a
folder of Parquet files), run once per ``--settings`` value, each in its own
``python -m curate run`` process whose peak resident set size is read from the
kernel (``os.wait4``'s ``ru_maxrss``), with the exact engine.

What the setting bounds (see the README, "Memory"): the temporaries of the
neighbour queries, the row batches in which kept.parquet and removed.parquet
are written, and the rows the report projects. What it does not bound: the
input table, the matrix of the space and the audit, which every run holds
whole. So the peak of a small setting is the fixed part plus a little; the
difference between two settings is what the setting governs.

Run: ``.venv/bin/python benchmarks/bench_memory.py [--rows 200000] [--settings 64,1024]``.
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from benchmarks.bench_pipeline import (  # noqa: E402
    build_table,
    pipeline_text,
    run_curate,
    write_inputs,
)
from benchmarks.common import load_note  # noqa: E402


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=200_000)
    parser.add_argument("--cols", type=int, default=20)
    parser.add_argument("--settings", default="64,1024",
                        help="comma-separated --memory-mb values, one run each")
    parser.add_argument("--backend", default="fast")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--timeout", type=float, default=1800, help="seconds per run")
    args = parser.parse_args()
    settings = [int(v) for v in args.settings.split(",")]
    print(f"{args.rows} rows x {args.cols} columns; nproc {os.cpu_count()}; start: {load_note()}")
    folder = Path(tempfile.mkdtemp(prefix="curate-bench-memory-"))
    try:
        frame, _ = build_table(args.rows, args.cols, 3, 0.01, 0.05, args.seed)
        pipeline = folder / "pipeline.toml"
        pipeline.write_text(pipeline_text(write_inputs(frame, folder), args.seed))
        input_mb = frame.estimated_size() / 2**20
        del frame
        runs = []
        for memory_mb in settings:
            started = time.perf_counter()
            run = run_curate(pipeline, folder / f"run-{memory_mb}", args.backend, memory_mb,
                             args.timeout)
            runs.append((memory_mb, run, time.perf_counter() - started))
        print(f"\ninput table in memory: {input_mb:.0f} MiB")
        for memory_mb, run, seconds in runs:
            print(f"--memory-mb {memory_mb:>5}: peak {run.peak_mb:7.0f} MiB "
                  f"({run.peak_mb / input_mb:.1f} x the input), wall {seconds:6.1f} s, "
                  f"exit {run.code}")
        if len(runs) > 1:
            low, high = runs[0][1], runs[-1][1]
            print(f"peak at {runs[-1][0]} MB / peak at {runs[0][0]} MB: "
                  f"{high.peak_mb / max(low.peak_mb, 1e-9):.2f}")
        print(f"end: {load_note()}")
        return 0 if all(run.code == 0 for _, run, _ in runs) else 1
    finally:
        shutil.rmtree(folder, ignore_errors=True)


if __name__ == "__main__":
    sys.exit(main())
