"""The `curate` command: parses, calls, prints. No logic of its own."""

from __future__ import annotations

import argparse
import json
import sys
import warnings
from collections.abc import Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any

from curate.errors import CurateError, UsageError
from curate.progress import Reporter

__all__ = ["main"]


def _load(args: argparse.Namespace) -> Any:
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
        engine = replace(engine, cluster=args.cluster)
        spec = replace(spec, cluster=replace(spec.cluster, address=args.cluster))
    return replace(spec, run=replace(spec.run, engine=engine))


def cmd_run(args: argparse.Namespace) -> int:
    from curate.api import run

    spec = _load(args)
    out = Path(args.out) if args.out else spec.output.folder
    with Reporter(args.quiet) as say:
        result = run(spec, out=out, overwrite=args.overwrite or spec.output.overwrite,
                     progress=say)
    if args.json:
        print(json.dumps(result.summary, indent=2, default=str))
    elif not args.quiet:
        print(_summary_text(result.summary, out), file=sys.stderr)
    return 0


def _summary_text(summary: dict[str, Any], out: Path) -> str:
    lines = [f"{summary['rows_in']} rows in, {summary['rows_kept']} kept, "
             f"{summary['rows_removed']} removed ({summary['rows_quarantined']} quarantined)"]
    for st in summary["stages"]:
        reasons = ", ".join(f"{k} {v}" for k, v in st["by_reason"].items()) or "nothing"
        lines.append(f"  {st['name']} ({st['method']}): {st['rows_in']} in, removed {reasons}, "
                     f"{st['seconds']:.2f} s")
    lines.append(f"run folder: {out}")
    return "\n".join(lines)


def cmd_why(args: argparse.Namespace) -> int:
    from curate.audit import explain
    from curate.outputs import settle

    settle(args.run)
    print(explain(Path(args.run), args.row_id))
    return 0


def cmd_check(args: argparse.Namespace) -> int:
    from curate.pipeline import check_stages, prepare

    spec = _load(args)
    prep = prepare(spec)
    check_stages(prep)
    print(f"{spec.source}: pipeline file and input are valid: {prep.frame.height} rows, "
          f"{int((~prep.valid).sum())} would be quarantined, {len(prep.features)} features, "
          f"{len(spec.stages)} stages")
    return 0


def cmd_distances(args: argparse.Namespace) -> int:
    from curate.methods.near import distance_profile
    from curate.pipeline import prepare

    prep = prepare(_load(args))
    profile = distance_profile(prep.space, prep.space_labels, radii=args.radius)
    if args.json:
        print(json.dumps(profile, indent=2))
        return 0
    for key, values in profile.items():
        if key == "candidates":
            print("candidate radius   rows with a same-label row within   would remove   conflicting")
            for c in values:
                print(f"  {c['radius']:<16.4g} {c['rows_with_same_label_within']:>30} "
                      f"{c['would_remove']:>14} {c['conflicting_rows']:>13}")
        else:
            print(f"{key}: {json.dumps(values)}")
    return 0


def cmd_methods(args: argparse.Namespace) -> int:
    from curate.methods import METHODS

    table: list[dict[str, Any]] = [
        {"key": m.key, "name": m.name, "family": m.family, "reference": m.reference,
         "purpose": m.purpose, "reasons": m.reasons,
         "params": [{"name": p.name, "default": p.default, "allowed": p.allowed(),
                     "doc": p.doc} for p in m.params]} for m in METHODS.values()]
    if args.json:
        print(json.dumps(table, indent=2, default=str))
        return 0
    for info in METHODS.values():
        print(f"{info.key:<24} {info.name} ({info.family}; {info.reference})")
        print(f"{'':<24} {info.purpose}")
        for p in info.params:
            print(f"{'':<26}{p.name} = {p.default!r}: {p.doc} ({p.allowed()})")
        print()
    return 0


def cmd_demo(args: argparse.Namespace) -> int:
    from curate.demo import run_demo

    with Reporter(args.quiet) as say:
        text = run_demo(rows=args.rows, out=Path(args.out), seed=args.seed, quiet=args.quiet,
                        progress=say)
    print(text)
    return 0


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="curate", description="Clean and shrink a training "
                                     "table, with an audit of every removed row.")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    p = sub.add_parser("run", help="run a pipeline file and write a run folder")
    p.add_argument("pipeline")
    p.add_argument("--out", help="run folder (default: [output] folder)")
    p.add_argument("--overwrite", action="store_true", help="replace a run folder curate wrote")
    p.add_argument("--json", action="store_true", help="print the summary as JSON on stdout")
    p.add_argument("--quiet", action="store_true", help="no progress on stderr")
    p.add_argument("--memory-mb", type=int, help="memory for neighbour queries, in MB")
    p.add_argument("--backend", help="neighbour engine: auto, brute, sklearn, faiss, fast, "
                   "approximate")
    p.add_argument("--recall-target", type=float, metavar="SHARE",
                   help="recall the approximate engine probes for (default 0.99)")
    p.add_argument("--cluster", metavar="ADDRESS", help="run on a Dask cluster: a scheduler "
                   "address, or local:N for N worker processes on this machine")
    p.set_defaults(func=cmd_run)
    p = sub.add_parser("why", help="explain what happened to one row")
    p.add_argument("row_id")
    p.add_argument("--run", required=True, help="the run folder")
    p.set_defaults(func=cmd_why)
    p = sub.add_parser("check", help="check the pipeline file and the input, select nothing")
    p.add_argument("pipeline")
    p.set_defaults(func=cmd_check)
    p = sub.add_parser("distances", help="nearest-neighbour distances, to choose a near-copy radius")
    p.add_argument("pipeline")
    p.add_argument("--radius", type=float, action="append",
                   help="a candidate radius to try (repeatable)")
    p.add_argument("--json", action="store_true")
    p.set_defaults(func=cmd_distances)
    p = sub.add_parser("methods", help="list every method with its parameters")
    p.add_argument("--json", action="store_true")
    p.set_defaults(func=cmd_methods)
    p = sub.add_parser("demo", help="build the pump-fleet demo data and run its pipeline")
    p.add_argument("--rows", type=int, default=20000)
    p.add_argument("--seed", type=int, default=7)
    p.add_argument("--out", default="demo")
    p.add_argument("--quiet", action="store_true")
    p.set_defaults(func=cmd_demo)
    __import__("curate.evaluate", fromlist=["register"]).register(sub)
    __import__("curate.review", fromlist=["register"]).register(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the `curate` command; returns the exit code."""
    args = _parser().parse_args(argv)
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                return int(args.func(args))
            finally:
                for item in caught:
                    if issubclass(item.category, UserWarning):
                        print(f"warning: {item.message}", file=sys.stderr)
    except CurateError as err:
        print(f"{type(err).__name__}: {err}", file=sys.stderr)
        return err.exit_code
    except KeyboardInterrupt as stop:
        print("stopped: nothing was written", file=sys.stderr)
        return int(getattr(stop, "exit_code", 130))


if __name__ == "__main__":
    sys.exit(main())
