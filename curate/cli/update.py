"""`curate update`: add new rows to a run folder, redoing only the work they cause.

Parsing only at import: every library is imported inside the command, so
`curate --help` starts without them.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

from curate.cli.pipeline import add_trust_option
from curate.settings import BACKENDS

__all__ = ["add_commands"]


def cmd_update(args: argparse.Namespace) -> int:
    """Handler of ``curate update``."""
    from curate.api import update
    from curate.cli.pipeline import load_with_options
    from curate.cli.progress import Reporter
    from curate.cli.render import summary_text, update_text

    spec = load_with_options(args)
    out = Path(args.out) if args.out else spec.output.folder
    with Reporter(args.quiet) as say:
        result = update(spec, run=args.run, new=args.new, out=out, refit=args.refit,
                        overwrite=args.overwrite or spec.output.overwrite, progress=say)
    if args.json:
        print(json.dumps(result.summary, indent=2, default=str))
    elif not args.quiet:
        print(update_text(result.summary["update"]), file=sys.stderr)
        print(summary_text(result.summary, out), file=sys.stderr)
    return 0


def add_commands(sub: Any) -> None:
    """Add ``update`` to the CLI's subparsers."""
    p = sub.add_parser("update", help="add new rows to a run folder without recomputing "
                       "everything, and write the updated run folder")
    p.add_argument("pipeline", help="the pipeline file the run used")
    add_trust_option(p)
    p.add_argument("--run", required=True, metavar="DIR", help="the run folder to start from "
                   "(only read)")
    p.add_argument("--new", required=True, metavar="FILE", help="the new rows: a CSV or "
                   "Parquet file, a folder of them, or a glob, with the run's columns")
    p.add_argument("--out", metavar="NEWDIR", help="the updated run folder (default: "
                   "[output] folder)")
    p.add_argument("--refit", action="store_true", help="run everything again on old and new "
                   "rows, refitting the space (a full run)")
    p.add_argument("--overwrite", action="store_true", help="replace an existing run folder "
                   "at --out")
    p.add_argument("--json", action="store_true", help="print the summary as JSON on stdout")
    p.add_argument("--quiet", action="store_true", help="no progress on stderr")
    p.add_argument("--memory-mb", type=int, help="memory for neighbour queries, in MB")
    p.add_argument("--backend", help="neighbour engine: " + ", ".join(BACKENDS))
    p.set_defaults(func=cmd_update)
