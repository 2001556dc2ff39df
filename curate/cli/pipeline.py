"""`curate run`, `curate check` and `curate distances`: commands that read a pipeline file.

Parsing only at import: every library is imported inside the command that
needs it, so `curate --help` starts without them.
"""

from __future__ import annotations

import argparse
import json
import sys
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

from curate.errors import UsageError
from curate.settings import BACKENDS

if TYPE_CHECKING:
    from curate.settings import Spec

__all__ = ["add_commands", "load_with_options"]


def load_with_options(args: argparse.Namespace) -> Spec:
    """Read the pipeline file and apply the command line's engine and cluster options."""
    from curate.spec import load_spec

    spec = load_spec(args.pipeline)
    engine = spec.run.engine
    if getattr(args, "memory_mb", None):
        engine = replace(engine, memory_mb=args.memory_mb)
    if getattr(args, "backend", None):
        engine = replace(engine, backend=args.backend)
    if getattr(args, "recall_target", None) is not None:
        if not 0.0 < args.recall_target <= 1.0:
            raise UsageError(f"--recall-target {args.recall_target} is not a share",
                             hint="give a number above 0 and at most 1, for example 0.99")
        engine = replace(engine, recall_target=args.recall_target)
    if getattr(args, "cluster", None):
        engine = replace(engine, cluster_address=args.cluster)
        spec = replace(spec, cluster=replace(spec.cluster, address=args.cluster))
    return replace(spec, run=replace(spec.run, engine=engine))


def cmd_run(args: argparse.Namespace) -> int:
    """Handler of ``curate run``."""
    from curate.api import run
    from curate.cli.progress import Reporter
    from curate.cli.render import summary_text

    spec = load_with_options(args)
    out = Path(args.out) if args.out else spec.output.folder
    with Reporter(args.quiet) as say:
        result = run(spec, out=out, overwrite=args.overwrite or spec.output.overwrite,
                     progress=say)
    if args.json:
        print(json.dumps(result.summary, indent=2, default=str))
    elif not args.quiet:
        print(summary_text(result.summary, out), file=sys.stderr)
    return 0


def cmd_check(args: argparse.Namespace) -> int:
    """Handler of ``curate check``."""
    from curate.pipeline.loop import check_stages
    from curate.pipeline.prepare import prepare

    spec = load_with_options(args)
    prep = prepare(spec)
    check_stages(prep)
    print(f"{spec.source}: pipeline file and input are valid: {prep.frame.height} rows, "
          f"{int((~prep.valid).sum())} would be quarantined, {len(prep.features)} features, "
          f"{len(spec.stages)} stages")
    return 0


def cmd_distances(args: argparse.Namespace) -> int:
    """Handler of ``curate distances``."""
    from curate.cli.render import distances_text
    from curate.methods.duplicates import distance_profile
    from curate.pipeline.prepare import prepare

    prep = prepare(load_with_options(args))
    profile = distance_profile(prep.space, prep.space_labels, radii=args.radius)
    print(json.dumps(profile, indent=2) if args.json else distances_text(profile))
    return 0


def add_commands(sub: Any) -> None:
    """Add ``run``, ``check`` and ``distances`` to the CLI's subparsers."""
    p = sub.add_parser("run", help="run a pipeline file and write a run folder")
    p.add_argument("pipeline")
    p.add_argument("--out", help="run folder (default: [output] folder)")
    p.add_argument("--overwrite", action="store_true", help="replace a run folder curate wrote")
    p.add_argument("--json", action="store_true", help="print the summary as JSON on stdout")
    p.add_argument("--quiet", action="store_true", help="no progress on stderr")
    p.add_argument("--memory-mb", type=int, help="memory for neighbour queries, in MB")
    p.add_argument("--backend", help="neighbour engine: " + ", ".join(BACKENDS))
    p.add_argument("--recall-target", type=float, metavar="SHARE",
                   help="recall the approximate engine probes for (default 0.99)")
    p.add_argument("--cluster", metavar="ADDRESS", help="run on a Dask cluster: a scheduler "
                   "address, or local:N for N worker processes on this machine")
    p.set_defaults(func=cmd_run)
    p = sub.add_parser("check", help="check the pipeline file and the input, select nothing")
    p.add_argument("pipeline")
    p.set_defaults(func=cmd_check)
    p = sub.add_parser("distances", help="nearest-neighbour distances, to choose a near-copy radius")
    p.add_argument("pipeline")
    p.add_argument("--radius", type=float, action="append",
                   help="a candidate radius to try (repeatable)")
    p.add_argument("--json", action="store_true")
    p.set_defaults(func=cmd_distances)
