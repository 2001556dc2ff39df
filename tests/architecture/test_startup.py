"""What the `curate` command imports before it does anything.

Reference: CPython's ``-X importtime`` report (one line per module imported,
documented in the command-line options of the Python manual). The heavy
numeric libraries are imported where they are used, so ``curate --help``
imports none of them and ``curate why`` only polars, which reads the run
folder. This counts modules; it times nothing.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HEAVY = ("numpy", "polars", "scipy", "sklearn", "numba", "pandera", "matplotlib", "pyarrow",
         "pandas", "dask", "distributed", "rich")


def _imported(*args: str) -> set[str]:
    """Top-level package names that ``python -X importtime -m curate ARGS`` imported."""
    done = subprocess.run([sys.executable, "-X", "importtime", "-m", "curate", *args],
                          capture_output=True, text=True, check=False)
    names = set()
    for line in done.stderr.splitlines():
        if line.startswith("import time:") and line.count("|") == 2:
            names.add(line.rsplit("|", 1)[1].strip().split(".")[0])
    assert "curate" in names, done.stderr[-2000:]
    return names


def test_help_imports_no_heavy_library() -> None:
    assert sorted(_imported("--help") & set(HEAVY)) == []


def test_why_imports_polars_only(tmp_path: Path) -> None:
    # No run folder here: the command fails cleanly, after importing what it needs.
    assert sorted(_imported("why", "3", "--run", str(tmp_path)) & set(HEAVY)) == ["polars"]
