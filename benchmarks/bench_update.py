"""An update against a full rerun: a store of ``--rows`` rows plus ``--new`` new rows.

Target (issue 14, 2 cores, 24 GiB): a store of 1,000,000 rows curated by the
demo pipeline's stages (exact copies, ENN with k = 3, FCNN) plus 10,000 new
rows: ``curate update`` takes at most 5% of the time of ``curate run`` on the
old and new rows together, both measured in this one script. ``make bench``
runs the quick version, 200,000 + 20,000 rows (there the new rows are a
tenth of the store, so the ratio is far above 5%: the work an update saves
grows with the store).

The data and the pipeline are those of ``benchmarks/bench_pipeline.py``
(scikit-learn's make_classification, 20 numeric columns, 3 classes, 1%
re-sent copies, 5% flipped labels, range-normalised, seeded): ``rows + new``
rows are drawn at once and the last ``new`` of them (in id order, which is
random) arrive as the update. Three ``python -m curate`` processes, each timed
from outside with its own peak memory: the run that makes the store, the
update, and the full rerun on old + new rows that the update replaces.

The full rerun refits the space (the ranges of old + new rows); the update
keeps the store's, as it should. The rows whose fate differs between the two
are counted and printed: a measure of what the fixed scaling and FCNN's
incremental store change, not an error.

Run: ``.venv/bin/python benchmarks/bench_update.py [--rows 1000000 --new 10000]``
on a quiet machine if you can; the load before and after is printed.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path
from typing import Any

import numpy as np
import polars as pl

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from benchmarks.bench_pipeline import ID, build_table, pipeline_text, write_inputs  # noqa: E402
from benchmarks.common import Child, load_note, run_child, scratch_folder, target_line  # noqa: E402

TARGET_SHARE = 0.05
TARGET_ROWS, TARGET_NEW = 1_000_000, 10_000


def curate(args: list[str], label: str, timeout: float) -> Child:
    """One ``python -m curate`` process, measured alone."""
    return run_child([sys.executable, "-m", "curate", *args], f"  [{label}] ", timeout,
                     cwd=Path(__file__).resolve().parents[1])


def stage_lines(folder: Path, label: str) -> list[str]:
    """Per-stage seconds from the run folder's summary, and the update's per-stage facts."""
    summary = json.loads((folder / "summary.json").read_text())
    facts = {s["name"]: s for s in summary.get("update", {}).get("stages", [])}
    lines = []
    for st in summary["stages"]:
        line = (f"  {label:<8} {st['name']:<14} {st['method']:<17} {st['rows_in']:>9} in "
                f"{st['removed']:>9} removed {st['seconds']:8.2f} s")
        if st["name"] in facts:
            f = facts[st["name"]]
            line += f"  {f['mode']}, {f.get('old_rows_rejudged', 0)} old rows judged again"
        lines.append(line)
    return lines


def fates(updated: Path, full: Path) -> str:
    """How many rows the update and the full rerun decide differently, per stage of removal."""
    def removed_by(folder: Path) -> pl.DataFrame:
        return pl.read_parquet(folder / "audit.parquet", columns=["row_id", "stage"])

    ours, theirs = removed_by(updated), removed_by(full)
    both = ours.join(theirs, on="row_id", how="full", coalesce=True, suffix="_full")
    differ = both.filter(pl.col("stage").fill_null("kept") != pl.col("stage_full")
                         .fill_null("kept"))
    rows = json.loads((updated / "summary.json").read_text())["rows_in"]
    return (f"rows whose fate differs between the update and the full rerun (which refits the "
            f"space): {differ.height} of {rows}")


def report(store: Child, upd: Child, full: Child, folder: Path, args: Any) -> list[str]:
    """The figures and the target line."""
    share = upd.seconds / full.seconds
    facts = json.loads((folder / "run-updated" / "summary.json").read_text())["update"]
    lines = [f"store run   {store.seconds:8.1f} s, peak {store.peak_mb:6.0f} MiB "
             f"({args.rows} rows)",
             f"update      {upd.seconds:8.1f} s, peak {upd.peak_mb:6.0f} MiB "
             f"(+{args.new} rows; {facts['rows_outside_fitted_ranges']} outside the fitted "
             f"ranges; equals a full run: {facts['equals_full_run']})",
             f"full rerun  {full.seconds:8.1f} s, peak {full.peak_mb:6.0f} MiB "
             f"({args.rows + args.new} rows)",
             f"update / full rerun = {share:.3f} ({full.seconds / upd.seconds:.1f}x faster)"]
    lines += stage_lines(folder / "run-updated", "update")
    lines += stage_lines(folder / "run-full", "full")
    lines.append(fates(folder / "run-updated", folder / "run-full"))
    at_target = args.rows >= TARGET_ROWS and args.new <= TARGET_NEW
    verdict = target_line(f"update <= {TARGET_SHARE:.0%} of the full rerun at "
                          f"{TARGET_ROWS:,} + {TARGET_NEW:,} rows", share <= TARGET_SHARE,
                          f"{share:.1%}")
    lines.append(verdict if at_target else f"(at {args.rows:,} + {args.new:,} rows; the target "
                                           f"is set at {TARGET_ROWS:,} + {TARGET_NEW:,}) "
                                           f"{verdict}")
    return lines


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=200_000, help="rows in the store")
    parser.add_argument("--new", type=int, default=20_000, help="new rows in the update")
    parser.add_argument("--cols", type=int, default=20)
    parser.add_argument("--classes", type=int, default=3)
    parser.add_argument("--copies", type=float, default=0.01, help="share of rows sent twice")
    parser.add_argument("--flips", type=float, default=0.05, help="share of labels flipped")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--timeout", type=float, default=3600, help="seconds per process")
    parser.add_argument("--keep", action="store_true", help="keep the temporary folder")
    args = parser.parse_args()
    print(f"store {args.rows} rows + {args.new} new, {args.cols} columns, {args.classes} "
          f"classes; start: {load_note()}", flush=True)
    with scratch_folder("curate-bench-update-", args.keep) as folder:
        start = time.perf_counter()
        frame, _ = build_table(args.rows + args.new, args.cols, args.classes, args.copies,
                               args.flips, args.seed)
        old, new = frame.head(args.rows), frame.tail(args.new)
        (folder / "store").mkdir()
        (folder / "all").mkdir()
        store_pipe, all_pipe = folder / "store.toml", folder / "all.toml"
        store_pipe.write_text(pipeline_text(write_inputs(old, folder / "store"), args.seed))
        all_pipe.write_text(pipeline_text(write_inputs(frame, folder / "all"), args.seed))
        new.write_parquet(folder / "new.parquet")
        assert not np.isin(new[ID].to_numpy(), old[ID].to_numpy()).any()
        print(f"data written to {folder} in {time.perf_counter() - start:.1f} s", flush=True)
        store = curate(["run", str(store_pipe), "--out", str(folder / "run-store")], "store",
                       args.timeout)
        upd = curate(["update", str(store_pipe), "--run", str(folder / "run-store"), "--new",
                      str(folder / "new.parquet"), "--out", str(folder / "run-updated")],
                     "update", args.timeout)
        full = curate(["run", str(all_pipe), "--out", str(folder / "run-full")], "full",
                      args.timeout)
        if store.code or upd.code or full.code:
            print(f"a process failed: store {store.code}, update {upd.code}, full {full.code}")
            return 1
        print("\n".join(report(store, upd, full, folder, args)))
        print(f"end: {load_note()}")
        return 0


if __name__ == "__main__":
    sys.exit(main())
