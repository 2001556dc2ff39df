"""`curate why` and `curate methods`: look up one row of a run, or the method library."""

from __future__ import annotations

import argparse
import json
from pathlib import Path
from typing import Any

__all__ = ["add_commands"]


def cmd_why(args: argparse.Namespace) -> int:
    """Handler of ``curate why``: reads the run folder with polars only."""
    from curate.io.explain import explain

    print(explain(Path(args.run), args.row_id))
    return 0


def cmd_methods(args: argparse.Namespace) -> int:
    """Handler of ``curate methods``."""
    from curate.cli.render import methods_table, methods_text
    from curate.methods import METHODS, REGRESSION_METHODS

    if args.json:
        print(json.dumps(methods_table(METHODS) + methods_table(REGRESSION_METHODS, "regression"),
                         indent=2, default=str))
    else:
        print(methods_text(METHODS))
        print("For regression tables (a numeric target; see [input] task):\n")
        print(methods_text(REGRESSION_METHODS, "regression"))
    return 0


def add_commands(sub: Any) -> None:
    """Add ``why`` and ``methods`` to the CLI's subparsers."""
    p = sub.add_parser("why", help="explain what happened to one row")
    p.add_argument("row_id")
    p.add_argument("--run", required=True, help="the run folder")
    p.set_defaults(func=cmd_why)
    p = sub.add_parser("methods", help="list every method with its parameters, for "
                       "classification and for regression tables")
    p.add_argument("--json", action="store_true")
    p.set_defaults(func=cmd_methods)
