"""Run every benchmark script in benchmarks/ in turn, each in its own process.

Without options each script runs at its own default sizes, which are the
issue's targets (this takes long: the million-row pipeline alone can take
twenty minutes on 2 cores). ``--quick`` runs them at small sizes, a smoke
check that every script still works end to end; its figures mean nothing.
Output streams through as the scripts print it. The exit code is non-zero
when any script failed (a missed target is printed, not a failure).

Run: ``.venv/bin/python benchmarks/run_all.py [--quick] [--only bench_enn]``
(``make bench`` runs it with the full sizes).
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
QUICK_ROWS = 20_000
# Scripts whose size options are not just --rows; bench_cnn's --rows also runs
# imbalanced-learn's quadratic CNN (about 270 s at 20,000 rows), so it gets less.
QUICK_ARGS = {"bench_cnn": ["--rows", "2000", "--large", str(QUICK_ROWS)],
              "bench_noise": ["--rows", str(QUICK_ROWS), "--tables", "iris,glass", "--seeds", "1",
                              "--flips", "uniform-10"],
              "bench_update": ["--rows", str(QUICK_ROWS), "--new", str(QUICK_ROWS // 10)]}


def scripts(only: list[str] | None) -> list[Path]:
    """The benchmark scripts, in name order, limited to ``only`` (names without .py)."""
    found = sorted(HERE.glob("bench_*.py"))
    if only:
        unknown = set(only) - {p.stem for p in found}
        if unknown:
            sys.exit(f"run_all: no benchmark named {', '.join(sorted(unknown))} in {HERE} "
                     f"(there are: {', '.join(p.stem for p in found)})")
        found = [p for p in found if p.stem in only]
    return found


def quick_args(script: Path) -> list[str]:
    """Small-size options for ``script``: its own entry, else --rows when it takes one."""
    if script.stem in QUICK_ARGS:
        return QUICK_ARGS[script.stem]
    return ["--rows", str(QUICK_ROWS)] if '"--rows"' in script.read_text() else []


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help=f"small sizes ({QUICK_ROWS} rows)")
    parser.add_argument("--only", action="append", metavar="NAME",
                        help="run only this script (name without .py; repeatable)")
    args = parser.parse_args()
    results: list[tuple[str, int, float]] = []
    for script in scripts(args.only):
        cmd = [sys.executable, str(script)] + (quick_args(script) if args.quick else [])
        print(f"\n=== {script.name} {' '.join(cmd[2:])}".rstrip(), flush=True)
        start = time.perf_counter()
        code = subprocess.run(cmd, cwd=HERE.parent).returncode
        results.append((script.name, code, time.perf_counter() - start))
    print("\n=== summary")
    for name, code, seconds in results:
        print(f"{name:<24} {'ok' if code == 0 else f'FAILED (exit {code})':<18} {seconds:8.1f} s")
    return 1 if any(code != 0 for _, code, _ in results) else 0


if __name__ == "__main__":
    sys.exit(main())
