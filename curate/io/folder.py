"""The files of a run folder, and recognising one.

One list of the files a run folder holds (:data:`RUN_FILES`); the one writer
of run folders, evaluation folders and review files, all or nothing, is
:mod:`curate.io.outputs`.
"""

from __future__ import annotations

from pathlib import Path

from curate.errors import UsageError
from curate.io.output_checks import MARKER
from curate.io.outputs import settle

__all__ = ["RUN_FILES", "RUN_FOLDER_FILES", "run_folder"]

# Every file a run folder may hold; the first four are always there, and so is the marker.
RUN_FILES = ("kept.parquet", "removed.parquet", "audit.parquet", "summary.json", "report.html",
             "protected.parquet", "flagged.parquet", MARKER)
RUN_FOLDER_FILES = RUN_FILES[:4]


def run_folder(folder: str | Path) -> Path:
    """Return ``folder`` as a path after checking that it holds a run's files.

    Examples
    --------
    >>> run_folder("no/such/run")
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: no/such/run is not a run folder (it has no kept.parquet)
      hint: give a folder that `curate run` wrote (its [output] folder or --out)
    """
    path = Path(folder)
    settle(path)
    missing = [name for name in RUN_FOLDER_FILES if not (path / name).is_file()]
    if missing:
        raise UsageError(f"{path} is not a run folder (it has no {missing[0]})",
                         hint="give a folder that `curate run` wrote (its [output] folder or --out)")
    return path
