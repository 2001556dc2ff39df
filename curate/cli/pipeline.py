"""`curate run`, `curate check` and `curate distances`: commands that read a pipeline file.

Parsing only at import: every library is imported inside the command that
needs it, so `curate --help` starts without them.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

from curate.errors import UsageError, counted
from curate.settings import BACKENDS, MIN_MEMORY_MB, canonical, suggest

if TYPE_CHECKING:
    from curate.settings import Spec

__all__ = ["add_commands", "add_trust_option", "load_with_options"]


def _check_options(args: argparse.Namespace) -> None:
    """Refuse impossible engine options before the pipeline file or the input is read."""
    memory = getattr(args, "memory_mb", None)
    if memory is not None and memory < MIN_MEMORY_MB:
        raise UsageError(f"--memory-mb {memory} is below the minimum of {MIN_MEMORY_MB} megabytes",
                         hint=f"give at least {MIN_MEMORY_MB} (megabytes); the default is [run] "
                              "memory_mb, else 1024")
    backend = getattr(args, "backend", None)
    if backend is not None and canonical(backend, BACKENDS) is None:
        raise UsageError(f"--backend {backend} is not a neighbour engine" + suggest(backend,
                                                                                   BACKENDS),
                         hint=f"use one of: {', '.join(BACKENDS)}")
    target = getattr(args, "recall_target", None)
    if target is not None and not 0.0 < target <= 1.0:
        raise UsageError(f"--recall-target {target} is not a share",
                         hint="give a number above 0 and at most 1, for example 0.99")


def load_with_options(args: argparse.Namespace) -> Spec:
    """Read the pipeline file and apply the command line's engine and cluster options."""
    from curate.spec import load_spec

    _check_options(args)
    spec = load_spec(args.pipeline, trust_code=getattr(args, "trust_code", None) or ())
    engine = spec.run.engine
    if getattr(args, "memory_mb", None) is not None:
        engine = replace(engine, memory_mb=args.memory_mb)
    if getattr(args, "backend", None):
        engine = replace(engine, backend=canonical(args.backend, BACKENDS) or args.backend)
    if getattr(args, "recall_target", None) is not None:
        engine = replace(engine, recall_target=args.recall_target)
    if getattr(args, "cluster", None):
        engine = replace(engine, cluster_address=args.cluster)
        spec = replace(spec, cluster=replace(spec.cluster, address=args.cluster))
    return replace(spec, run=replace(spec.run, engine=engine))


def cmd_run(args: argparse.Namespace) -> int:
    """Handler of ``curate run``."""
    started = time.perf_counter()
    from curate.api import run
    from curate.cli.progress import Reporter
    from curate.cli.render import summary_text

    spec = load_with_options(args)
    out = Path(args.out) if args.out else spec.output.folder
    with Reporter(args.quiet) as say:
        result = run(spec, out=out, overwrite=args.overwrite or spec.output.overwrite,
                     progress=say, started=started)
    if args.json:
        print(json.dumps(result.summary, indent=2, default=str))
    elif not args.quiet:
        print(summary_text(result.summary, out, time.perf_counter() - started), file=sys.stderr)
    return 0


def cmd_check(args: argparse.Namespace) -> int:
    """Handler of ``curate check``."""
    from curate.io.schema import describe_failures
    from curate.pipeline.loop import check_stages
    from curate.pipeline.prepare import prepare

    spec = load_with_options(args)
    prep = prepare(spec)
    check_stages(prep)
    print(f"{spec.source}: pipeline file and input are valid: {counted(prep.frame.height, 'row')}"
          f", {int((~prep.valid).sum())} would be quarantined, "
          f"{counted(len(prep.features), 'feature')}, {counted(len(spec.stages), 'stage')}")
    if prep.failures.height:
        ruled = {rule.name for rule in spec.input.columns}
        print(f"rows that would be quarantined, by column and failed check:\n"
              f"{describe_failures(prep.failures, prep.ids.to_list(), ruled)}")
    return 0


def cmd_distances(args: argparse.Namespace) -> int:
    """Handler of ``curate distances``."""
    from curate.cli.render import distances_text
    from curate.methods.duplicates import distance_profile
    from curate.pipeline.prepare import prepare

    prep = prepare(load_with_options(args))
    profile = distance_profile(prep.space, prep.space_labels, radii=args.radius)
    profile["distance"] = prep.spec.space.distance  # "metric" is how the space measures it
    print(json.dumps(profile, indent=2) if args.json else distances_text(profile))
    return 0


def add_trust_option(parser: argparse.ArgumentParser) -> None:
    """``--trust-code``, on every command that reads a pipeline file."""
    parser.add_argument("--trust-code", action="append", default=[], metavar="DIR_OR_MODULE",
                        help="a folder or an installed module the pipeline file's schema module "
                             "may load from, besides the pipeline file's folder (repeatable); "
                             "a schema module is code and runs with your rights")


def add_commands(sub: Any) -> None:
    """Add ``run``, ``check`` and ``distances`` to the CLI's subparsers."""
    p = sub.add_parser("run", help="run a pipeline file and write a run folder")
    p.add_argument("pipeline")
    add_trust_option(p)
    p.add_argument("--out", help="run folder (default: [output] folder)")
    p.add_argument("--overwrite", action="store_true", help="replace a run folder curate wrote")
    p.add_argument("--json", action="store_true", help="print the summary as JSON on stdout")
    p.add_argument("--quiet", action="store_true", help="no progress on stderr")
    p.add_argument("--memory-mb", type=int, help="memory for neighbour queries, output batches and the "
                   "report's sample, in MB (at least 16; see the README for what it covers)")
    p.add_argument("--backend", help="neighbour engine: " + ", ".join(BACKENDS))
    p.add_argument("--recall-target", type=float, metavar="SHARE",
                   help="recall the approximate engine probes for (default 0.99)")
    p.add_argument("--cluster", metavar="ADDRESS", help="run on a Dask cluster: a scheduler "
                   "address, or local:N for N worker processes on this machine")
    p.set_defaults(func=cmd_run)
    p = sub.add_parser("check", help="check the pipeline file and the input, select nothing")
    p.add_argument("pipeline")
    add_trust_option(p)
    p.set_defaults(func=cmd_check)
    p = sub.add_parser("distances", help="nearest-neighbour distances, to choose a near-copy radius")
    p.add_argument("pipeline")
    add_trust_option(p)
    p.add_argument("--radius", type=float, nargs="+", action="extend", metavar="R",
                   help="candidate radii to try: --radius 0.05 0.1 (or the option repeated)")
    p.add_argument("--json", action="store_true")
    p.set_defaults(func=cmd_distances)
