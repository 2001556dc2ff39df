"""`curate demo`: build the invented pump-fleet data and run its pipeline."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

__all__ = ["add_commands"]


def cmd_demo(args: argparse.Namespace) -> int:
    """Handler of ``curate demo``."""
    from curate.cli.progress import Reporter
    from curate.demo.pumps import run_demo

    with Reporter(args.quiet) as say:
        text = run_demo(rows=args.rows, out=Path(args.out), seed=args.seed, quiet=args.quiet,
                        progress=say)
    print(text)
    return 0


def add_commands(sub: Any) -> None:
    """Add ``demo`` to the CLI's subparsers."""
    p = sub.add_parser("demo", help="build the pump-fleet demo data and run its pipeline")
    p.add_argument("--rows", type=int, default=20000)
    p.add_argument("--seed", type=int, default=7)
    p.add_argument("--out", default="demo")
    p.add_argument("--quiet", action="store_true")
    p.set_defaults(func=cmd_demo)
