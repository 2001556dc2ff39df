"""The `curate` command: parse, call, print. No logic of its own.

One module per command group (:mod:`.pipeline`: run, check, distances;
:mod:`.lookup`: why, methods; :mod:`.review`: review, diff; :mod:`.evaluate`;
:mod:`.demo`), each adding its commands with ``add_commands``; the text they
print is built in :mod:`.render`. Only the standard library and curate's
light modules are imported until a command runs, so ``curate --help`` starts
fast. Only curate's own errors are caught: they print ``ErrorType: message``
and exit with the error's code.
"""

from __future__ import annotations

import argparse
import sys
import warnings
from collections.abc import Sequence

from curate.cli import demo, evaluate, lookup, pipeline, review
from curate.errors import CurateError

__all__ = ["main"]


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="curate", description="Clean and shrink a training "
                                     "table, with an audit of every removed row.")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    pipeline.add_commands(sub)
    lookup.add_commands(sub)
    demo.add_commands(sub)
    evaluate.add_commands(sub)
    review.add_commands(sub)
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
