"""`curate evaluate`: leakage-free cross-validation of a pipeline, from the command line."""

from __future__ import annotations

import argparse
import json
from collections.abc import Sequence
from contextlib import nullcontext
from pathlib import Path
from typing import Any

from curate.cli.pipeline import add_trust_option
from curate.errors import UsageError
from curate.settings import K_GRID

__all__ = ["add_commands", "parse_ks", "parse_model_params"]


def parse_ks(text: str | None) -> tuple[int, ...]:
    """Read ``--k``: comma-separated positive integers, or ``grid`` (1, 3, ..., 25), the default.

    Examples
    --------
    >>> parse_ks("5,1,3,3")
    (1, 3, 5)
    >>> parse_ks(None)[-1]
    25
    """
    if text is None or text.strip() == "grid":
        return K_GRID
    try:
        ks = sorted({int(part) for part in text.split(",") if part.strip()})
    except ValueError:
        raise UsageError(f"--k {text!r} is not a list of integers",
                         hint="write --k 1,3,5 or --k grid") from None
    if not ks or ks[0] < 1:
        raise UsageError(f"--k {text!r} needs integers >= 1", hint="write --k 1,3,5 or --k grid")
    return tuple(ks)


def parse_model_params(items: Sequence[str]) -> dict[str, Any]:
    """Read ``--model-param`` values: ``NAME=VALUE`` (VALUE as JSON, else text) or a JSON object.

    Examples
    --------
    >>> parse_model_params(["n_estimators=50", "criterion=entropy", '{"max_depth": 3}'])
    {'n_estimators': 50, 'criterion': 'entropy', 'max_depth': 3}
    """
    params: dict[str, Any] = {}
    for item in items:
        text = item.strip()
        if text.startswith("{"):
            try:
                params.update(json.loads(text))
            except json.JSONDecodeError as err:
                raise UsageError(f"--model-param {item!r} is not a JSON object: {err}",
                                 hint="write --model-param '{\"n_estimators\": 100}'") from None
            continue
        name, sep, value = text.partition("=")
        if not sep or not name.strip():
            raise UsageError(f"--model-param {item!r} is not NAME=VALUE",
                             hint="write --model-param n_estimators=100")
        try:
            params[name.strip()] = json.loads(value)
        except json.JSONDecodeError:
            params[name.strip()] = value
    return params


def _check_truth(truth: str | None) -> None:
    """A missing --truth table is named before any work."""
    if truth is not None and not Path(truth).exists():
        raise UsageError(f"--truth {truth} does not exist",
                         hint="give the table of known faulty rows (CSV or Parquet, with the "
                              "input's id column and 'fault'); a relative path starts where "
                              "curate runs, not at the pipeline file")


def _options(args: argparse.Namespace) -> dict[str, Any]:
    """The evaluation's settings from the command line, for one pipeline or several."""
    return {"folds": args.folds, "repeats": args.repeats, "ks": parse_ks(args.k),
            "model": args.model, "model_params": parse_model_params(args.model_param),
            "inject_noise": args.inject_noise, "noise_towards": args.noise_towards,
            "truth": args.truth, "seed": args.seed}


def _variant_names(paths: Sequence[str]) -> list[str]:
    """A name per pipeline file: its stem, or its path where two stems are the same.

    Examples
    --------
    >>> _variant_names(["p/enn.toml", "p/committee.toml"])
    ['enn', 'committee']
    >>> _variant_names(["a/x.toml", "b/x.toml"])
    ['a/x.toml', 'b/x.toml']
    """
    stems = [Path(p).stem for p in paths]
    return stems if len(set(stems)) == len(stems) else list(paths)


def _cmd_variants(args: argparse.Namespace) -> int:
    """``curate evaluate`` with several pipeline files or ``--vary``: a ranked comparison."""
    from curate.cli.progress import Reporter
    from curate.cli.render import ranking_text
    from curate.evaluation.crossval import evaluation_files
    from curate.evaluation.variants import evaluate_variants, vary
    from curate.io.output_checks import spec_inputs
    from curate.io.outputs import claim_output
    from curate.pipeline.prepare import prepare
    from curate.spec import load_spec

    if args.vary and len(args.pipeline) > 1:
        raise UsageError("--vary works on one pipeline file, but several were given",
                         hint="give one pipeline file with --vary, or several files without it")
    _check_truth(args.truth)
    specs = [load_spec(p, trust_code=args.trust_code) for p in args.pipeline]
    reads = [r for spec in specs for r in spec_inputs(spec)]
    out = claim_output(args.out, overwrite=args.overwrite, inputs=reads) if args.out else None
    with Reporter(args.quiet) as say, out or nullcontext() as claim:
        preps = [prepare(spec) for spec in specs]
        variants = vary(preps[0], args.vary) if args.vary else \
            list(zip(_variant_names(args.pipeline), preps, strict=True))
        result = evaluate_variants(variants, progress=say, **_options(args))
        if claim is not None:
            say(f"writing {args.out}")
            best = dict(variants)[result["variant"]]
            claim.write_folder(evaluation_files(result, best), kind="evaluation")
    print(json.dumps(result, indent=2) if args.json else ranking_text(result))
    return 0


def cmd_evaluate(args: argparse.Namespace) -> int:
    """Handler of ``curate evaluate``."""
    if len(args.pipeline) > 1 or args.vary:
        return _cmd_variants(args)
    from curate.cli.progress import Reporter
    from curate.cli.render import evaluation_text
    from curate.evaluation.crossval import evaluate_prepared, evaluation_files
    from curate.io.output_checks import spec_inputs
    from curate.io.outputs import claim_output
    from curate.pipeline.prepare import prepare
    from curate.spec import load_spec

    _check_truth(args.truth)
    spec = load_spec(args.pipeline[0], trust_code=args.trust_code)
    reads = spec_inputs(spec) + ([("the fault table", Path(args.truth))] if args.truth else [])
    out = claim_output(args.out, overwrite=args.overwrite, inputs=reads) if args.out else None
    with Reporter(args.quiet) as say, out or nullcontext() as claim:
        prep = prepare(spec)
        result = evaluate_prepared(prep, progress=say, **_options(args))
        if claim is not None:
            say(f"writing {args.out}")
            claim.write_folder(evaluation_files(result, prep), kind="evaluation")
    print(json.dumps(result, indent=2) if args.json else evaluation_text(result))
    return 0


def add_commands(sub: Any) -> None:
    """Add the ``evaluate`` command to the CLI's subparsers.

    Examples
    --------
    >>> parser = argparse.ArgumentParser()
    >>> add_commands(parser.add_subparsers())
    >>> parser.parse_args(["evaluate", "p.toml", "--k", "1,3"]).k
    '1,3'
    """
    p = sub.add_parser("evaluate", help="measure, without leakage, what curation does to "
                       "classification (cross-validation; stages run on training folds only)")
    p.add_argument("pipeline", nargs="+", help="a pipeline file, or several to compare on the "
                   "same folds")
    p.add_argument("--vary", action="append", default=[], metavar="STAGE.KEY=V1,V2",
                   help="compare variants of one pipeline file, such as "
                   "mislabels.method=enn,committee (repeatable: every combination)")
    add_trust_option(p)
    p.add_argument("--folds", type=int, default=10, help="stratified folds (default 10)")
    p.add_argument("--repeats", type=int, default=1, help="repeat with seeds seed, seed+1, ...")
    p.add_argument("--k", help="k values of the kNN classifier, such as 1,3,5, or 'grid' "
                   "for 1,3,...,25 (the default)")
    p.add_argument("--model", help="import path of a scikit-learn classifier to score besides "
                   "kNN, such as sklearn.ensemble.RandomForestClassifier")
    p.add_argument("--model-param", action="append", default=[], metavar="NAME=VALUE",
                   help="a parameter of --model (repeatable), or a JSON object of them")
    p.add_argument("--inject-noise", type=float, default=0.0, metavar="RATE",
                   help="flip this share of each fold's training labels before curation")
    p.add_argument("--noise-towards", metavar="CLASS", help="flip labels to this class "
                   "(default: another class drawn uniformly)")
    p.add_argument("--truth", metavar="FILE", help="table of known faulty rows (id column and "
                   "'fault') to score the removals against")
    p.add_argument("--seed", type=int, default=0, help="seed of the folds and the flips")
    p.add_argument("--out", metavar="FOLDER", help="write evaluation.json and report.html here")
    p.add_argument("--overwrite", action="store_true", help="replace an --out folder curate wrote")
    p.add_argument("--json", action="store_true", help="print the evaluation as JSON on stdout")
    p.add_argument("--quiet", action="store_true", help="no progress on stderr")
    p.set_defaults(func=cmd_evaluate)
