"""Writing output all at once or not at all, and recognising a run folder.

One list of the files a run folder holds (:data:`RUN_FILES`), one writer for
run folders (:func:`write_run_folder`: a temporary folder renamed into place)
and one for single files such as review tables (:func:`write_new_file`: a
temporary file renamed into place). Neither replaces a path unless told to,
and a failed write leaves nothing behind.
"""

from __future__ import annotations

import os
import shutil
import uuid
from collections.abc import Callable
from pathlib import Path

from curate.errors import UsageError

__all__ = ["RUN_FILES", "RUN_FOLDER_FILES", "run_folder", "write_new_file", "write_run_folder"]

# Every file a run folder may hold; the first four are always there.
RUN_FILES = ("kept.parquet", "removed.parquet", "audit.parquet", "summary.json", "report.html",
             "protected.parquet")
RUN_FOLDER_FILES = RUN_FILES[:4]


def write_run_folder(folder: Path, overwrite: bool, write: Callable[[Path], None]) -> None:
    """Let ``write`` fill a temporary folder, then put it in place in one rename.

    An existing ``folder`` is replaced only when ``overwrite`` is true; if
    ``write`` fails, nothing is left behind and any earlier run stays intact.
    """
    folder = Path(folder)
    if folder.exists() and not overwrite:
        raise UsageError(f"run folder {folder} already exists",
                         hint="pass --overwrite, set [output] overwrite = true, or choose "
                              "another --out")
    folder.parent.mkdir(parents=True, exist_ok=True)
    tmp = folder.parent / f".{folder.name}.partial-{uuid.uuid4().hex[:8]}"
    tmp.mkdir()
    try:
        write(tmp)
        if folder.exists():
            old = folder.parent / f".{folder.name}.old-{uuid.uuid4().hex[:8]}"
            os.replace(folder, old)
            os.replace(tmp, folder)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(tmp, folder)
    finally:
        if tmp.exists():
            shutil.rmtree(tmp, ignore_errors=True)


def write_new_file(path: Path, overwrite: bool, write: Callable[[Path], object]) -> None:
    """Write through a temporary file next to ``path``; refuse to replace one unless told."""
    if path.exists() and not overwrite:
        raise UsageError(f"{path} already exists; nothing was written",
                         hint="give another --out, or add --overwrite to replace it")
    if not path.parent.is_dir():
        raise UsageError(f"folder {path.parent} does not exist; nothing was written",
                         hint="create the folder, or give --out in an existing one")
    tmp = path.with_name(f".{path.name}.partial")
    write(tmp)
    os.replace(tmp, path)


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
    missing = [name for name in RUN_FOLDER_FILES if not (path / name).is_file()]
    if missing:
        raise UsageError(f"{path} is not a run folder (it has no {missing[0]})",
                         hint="give a folder that `curate run` wrote (its [output] folder or --out)")
    return path
