"""`curate review` and `curate diff`: a reviewer's CSV of removed rows, and two runs compared."""

from __future__ import annotations

import argparse
import json
import os
import sys
from contextlib import nullcontext
from pathlib import Path
from typing import Any

__all__ = ["add_commands"]


def cmd_review(args: argparse.Namespace) -> int:
    """Handler of ``curate review``."""
    from curate.cli.render import review_text
    from curate.io.review import write_review

    counts = write_review(args.run, args.out, overwrite=args.overwrite)
    print(review_text(*counts, args.run, args.out, protect_path(args.run, args.out)),
          file=sys.stderr)
    return 0


def protect_path(run: str | Path, out: str | Path) -> str:
    """``out`` as ``[input] protect_file`` must name it: relative to the run's pipeline file.

    A pipeline file reads relative paths from its own folder, not from where
    ``curate review`` ran. The run's summary names the pipeline file; without
    one (a run from Python), the absolute path works from anywhere.
    """
    target = Path(out).resolve()
    summary = Path(run) / "summary.json"
    pipeline = json.loads(summary.read_text(encoding="utf-8")).get("pipeline") \
        if summary.is_file() else None
    if not pipeline or not Path(pipeline).is_absolute():
        return str(target)
    try:
        return os.path.relpath(target, Path(pipeline).parent)
    except ValueError:  # another drive (Windows): no relative path exists
        return str(target)


def cmd_diff(args: argparse.Namespace) -> int:
    """Handler of ``curate diff``."""
    from curate.cli.render import diff_text
    from curate.io.diff import diff_runs
    from curate.io.review import claim_csv
    from curate.io.spreadsheet import spreadsheet_safe

    out = claim_csv(Path(args.out), args.overwrite, [Path(args.run_a), Path(args.run_b)],
                    ("row_id", "change")) if args.out else nullcontext()
    with out as claim:
        diff = diff_runs(args.run_a, args.run_b, force=args.force)
        if claim is not None:
            claim.write_file(spreadsheet_safe(diff.changes).write_csv,
                             int(diff.changes.estimated_size()))
    if diff.warning:
        print(f"warning: {diff.warning}", file=sys.stderr)
    print(json.dumps(diff.to_json(), indent=2, default=str) if args.json else diff_text(diff))
    return 0


def add_commands(sub: Any) -> None:
    """Add ``review`` and ``diff`` to the CLI's subparsers."""
    p = sub.add_parser("review", help="write a run's removed rows to a CSV for a reviewer to mark")
    p.add_argument("--run", required=True, help="the run folder")
    p.add_argument("--out", default="review.csv", help="the CSV to write (default: review.csv)")
    p.add_argument("--overwrite", action="store_true", help="replace a review file curate wrote")
    p.set_defaults(func=cmd_review)
    p = sub.add_parser("diff", help="list the rows whose fate changed between two runs")
    p.add_argument("run_a")
    p.add_argument("run_b")
    p.add_argument("--json", action="store_true", help="print the changes as JSON on stdout")
    p.add_argument("--out", help="also write the changes to this CSV file")
    p.add_argument("--overwrite", action="store_true", help="replace an --out file curate wrote")
    p.add_argument("--force", action="store_true", help="compare runs over different inputs "
                   "on the row ids both have")
    p.set_defaults(func=cmd_diff)
