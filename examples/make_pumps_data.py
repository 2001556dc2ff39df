"""Write the invented pump-fleet demo data (readings and ground truth) to a folder.

Usage: ``python examples/make_pumps_data.py --rows 20000 --seed 7 --out demo/data``.
The default folder is ``demo/data`` at the repository root, where ``make demo``
writes the same files and ``pipelines/pumps.toml`` looks for them.
"""

from __future__ import annotations

import argparse
from pathlib import Path

from curate.demo.data import write


def main(argv: list[str] | None = None) -> int:
    """Parse the options, write the files and name them."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=20000, help="rows in readings, copies included")
    parser.add_argument("--seed", type=int, default=7, help="seed of the random generator")
    parser.add_argument("--out", type=Path, default=Path(__file__).resolve().parents[1] / "demo"
                        / "data", help="folder to write readings.csv and truth.csv into")
    parser.add_argument("--format", choices=("csv", "parquet"), default="csv")
    args = parser.parse_args(argv)
    for name, path in write(args.out, rows=args.rows, seed=args.seed, fmt=args.format).items():
        print(f"{name}: {path}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
