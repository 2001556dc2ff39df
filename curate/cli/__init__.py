"""The `curate` command: parse, call, print. No logic of its own.

One module per command group (:mod:`.pipeline`: run, check, distances; :mod:`.update`;
:mod:`.lookup`: why, methods; :mod:`.review`: review, diff; :mod:`.evaluate`;
:mod:`.demo`), each adding its commands with ``add_commands``; the text they
print is built in :mod:`.render`. Only the standard library and curate's
light modules are imported until a command runs, so ``curate --help`` starts
fast. Only curate's own errors are caught: they print ``error: message`` and
the ``hint:`` line, and exit with the error's code. Warnings are printed once
each, after the command, and not at all with ``--quiet`` — except what curate did
to a path it had written before (a finished or undone replace, a dead run's lock
taken over), which is said whatever the options.
"""

from __future__ import annotations

import argparse
import os
import sys
import warnings
from collections.abc import Sequence

from curate.errors import CurateError, OutputRecovered

__all__ = ["main"]

# 128 + the signal's number, as shells report a process the signal stopped.
INTERRUPTED, BROKEN_PIPE = 130, 141


def _parser() -> argparse.ArgumentParser:
    # Imported here, not at the top, so that Ctrl-C while they load is caught by main.
    from curate.cli import demo, evaluate, lookup, pipeline, review, update

    parser = argparse.ArgumentParser(prog="curate", description="Clean and shrink a training "
                                     "table, with an audit of every removed row.")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    pipeline.add_commands(sub)
    update.add_commands(sub)
    lookup.add_commands(sub)
    demo.add_commands(sub)
    evaluate.add_commands(sub)
    review.add_commands(sub)
    return parser


def _print_warnings(caught: list[warnings.WarningMessage], quiet: bool) -> None:
    """Each distinct warning once: folds and repeated fits raise the same one many times."""
    seen: set[str] = set()
    for item in caught:
        text = str(item.message)
        shown = issubclass(item.category, OutputRecovered) or not quiet
        if shown and issubclass(item.category, UserWarning) and text not in seen:
            seen.add(text)
            print(f"warning: {text}", file=sys.stderr)


def _command(argv: Sequence[str] | None) -> int:
    try:
        args = _parser().parse_args(argv)
    finally:
        sys.stdout.flush()  # --help into a closed pipe: caught by main, not at exit
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                code = int(args.func(args))
                sys.stdout.flush()  # a closed pipe shows here, not at exit with a traceback
                return code
            finally:
                _print_warnings(caught, bool(getattr(args, "quiet", False)))
    except CurateError as err:
        print(f"error: {err}", file=sys.stderr)
        return err.exit_code


def _silence_closed_pipes() -> None:
    """Point stdout and stderr at the null device, so that exiting flushes nowhere."""
    null = os.open(os.devnull, os.O_WRONLY)
    for stream in (sys.stdout, sys.stderr):
        try:
            os.dup2(null, stream.fileno())
        except (OSError, ValueError):  # a stream without a descriptor (a test's capture)
            continue
    os.close(null)


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the `curate` command; returns the exit code.

    Ctrl-C at any point, start-up included, ends with a one-line message and
    exit code 130; a reader that closes the pipe early (``curate methods |
    head``) ends it quietly with 141. Nothing is written in either case, since
    a run folder appears only when complete.
    """
    try:
        return _command(argv)
    except KeyboardInterrupt as stop:
        print("interrupted: stopped; nothing partial was written", file=sys.stderr)
        return int(getattr(stop, "exit_code", INTERRUPTED))
    except BrokenPipeError:
        _silence_closed_pipes()
        return BROKEN_PIPE


if __name__ == "__main__":
    sys.exit(main())
