"""The checks every output path passes before any work starts.

:func:`check_output` refuses (exit 2, :class:`~curate.errors.OutputError`) an
output path that is, contains or sits inside something the command reads,
runs through a file, lies in a folder that cannot be written, exists without
``overwrite``, or exists but was not written by curate. A folder curate writes
holds :data:`MARKER`, which lists its files; ``overwrite`` replaces only such a
folder, and only while it holds nothing else. A file is replaced only when the
writer recognises it as one of its own (a review CSV by its header).
"""

from __future__ import annotations

import json
import os
import re
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from curate.errors import OutputError
from curate.io.globbing import glob_files

if TYPE_CHECKING:
    from curate.settings import Spec

__all__ = ["MARKER", "amount", "check_output", "check_overlap", "spec_inputs"]

MARKER = "written-by-curate.json"
_WORKING = re.compile(r"\.(.+)\.(?:lock(?:-[0-9a-f]{8})?|(?:partial|old)-[0-9a-f]{8}|swap\.json(?:\.tmp)?)")
_KEEP_HINT = ("curate replaces only what it wrote itself; choose a new output path, or move "
              "this one away yourself")


def spec_inputs(spec: Spec) -> list[tuple[str, Path]]:
    """Everything a pipeline reads, named for messages: the output must stay clear of all of it.

    Examples
    --------
    >>> from curate.spec import spec_from_dict
    >>> spec = spec_from_dict({"input": {"path": "t.csv", "label": "y"},
    ...                        "stages": [{"method": "exact-duplicates"}]}, base="/data")
    >>> spec_inputs(spec)
    [('the input', PosixPath('/data/t.csv'))]
    """
    found = [("the input", spec.input.path)]
    if spec.source != "<dict>":
        found.append(("the pipeline file", Path(spec.source)))
    module = (spec.input.schema or "").rpartition(":")[0]
    if module.endswith(".py"):
        found.append(("the schema file", Path(module)))
    if spec.input.protect_file is not None:
        found.append(("the protect file", spec.input.protect_file))
    return found


def _listing(path: Path) -> str:
    if path.is_file():
        with open(path, "rb") as handle:
            start = handle.read(60).decode("utf-8", "replace").splitlines()
        return f"a file of {amount(path.stat().st_size)} starting {(start or [''])[0]!r}"
    try:
        entries = sorted(path.iterdir())
    except OSError as err:
        return f"entries that cannot be listed ({err.strerror})"
    if not entries:
        return "nothing (it is an empty folder)"
    names = ", ".join(e.name + ("/" if e.is_dir() else "") for e in entries[:5])
    count = len(entries)
    return f"{count} entr{'y' if count == 1 else 'ies'} ({'first: ' if count > 5 else ''}{names})"


def _not_ours(path: Path, folder: bool, owned: Callable[[Path], bool] | None) -> str | None:
    """Why ``path`` may not be replaced, or None when curate wrote it and nothing else is in it."""
    if folder != path.is_dir():
        return f"it is a {'file' if folder else 'folder'}, not a {'folder' if folder else 'file'} " \
               "curate wrote"
    if not folder:
        return None if owned is not None and owned(path) else "it is not a file curate wrote"
    try:
        data = json.loads((path / MARKER).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return f"it has no {MARKER}, the mark of a folder curate wrote"
    if not isinstance(data, dict) or data.get("written_by") != "curate":
        return f"its {MARKER} does not name curate"
    listed = {str(name) for name in data.get("files", [])} | {MARKER}
    extra = sorted(e.name for e in path.iterdir()
                   if e.name not in listed and not _working_name(e.name, listed))
    if extra:
        return f"curate did not write {', '.join(extra[:5])}{', ...' if len(extra) > 5 else ''} there"
    return None


def _working_name(name: str, listed: set[str]) -> bool:
    """Whether ``name`` is curate's own lock, partial, old or journal name of a listed entry
    (left there by a run into a folder inside this one, such as the demo's run folder)."""
    found = _WORKING.fullmatch(name)
    return found is not None and found.group(1) in listed


def _check_parents(path: Path) -> None:
    folder = path.parent
    while not folder.exists():
        folder = folder.parent
    if not folder.is_dir():
        raise OutputError(f"cannot write {path}: {folder} is a file, not a folder; nothing was "
                          "written", hint="choose an output path whose folders are folders")
    read_only = bool(os.statvfs(folder).f_flag & os.ST_RDONLY)
    if read_only or not os.access(folder, os.W_OK | os.X_OK):
        why = "is on a read-only file system" if read_only else "may not be written (permission denied)"
        raise OutputError(f"cannot write {path}: {folder} {why}; nothing was written",
                          hint="choose an output path in a folder you can write to")


def check_output(target: str | Path, *, overwrite: bool,
                 inputs: Sequence[tuple[str, Path]] = (), folder: bool = True,
                 owned: Callable[[Path], bool] | None = None) -> Path:
    """Check an output path before any work; return it absolute, or raise :class:`OutputError`.

    ``inputs`` are (what, path) pairs the output must not be, contain or sit
    inside (paths may be globs); ``folder`` says whether the output is a
    folder (replaced only when it holds :data:`MARKER`) or a file (replaced
    only when ``owned`` recognises it).

    Examples
    --------
    >>> import tempfile
    >>> data = Path(tempfile.mkdtemp())
    >>> _ = (data / "t.csv").write_text("x,y\\n1,a\\n")
    >>> check_output(data / "run", overwrite=False, inputs=[("the input", data / "t.csv")]).name
    'run'
    >>> check_output(data, overwrite=True)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    curate.errors.OutputError: overwrite may not replace ...: it has no written-by-curate.json, ...
    """
    given = Path(os.path.abspath(target))
    path = Path(os.path.realpath(given.parent)) / given.name
    if path.is_symlink():
        raise OutputError(f"{path} is a symbolic link; curate does not write through links; "
                          "nothing was written", hint="give the real path, or another output path")
    _check_parents(path)
    check_overlap(path, inputs)
    if not path.exists():
        return path
    if not overwrite:
        raise OutputError(f"{path} already exists; nothing was written",
                          hint="add --overwrite (in a pipeline file: [output] overwrite = true) to "
                               "replace what curate wrote there before, or choose another path")
    why = _not_ours(path, folder, owned)
    if why is not None:
        raise OutputError(f"overwrite may not replace {path}: {why}; it holds {_listing(path)}; "
                          "nothing was written", hint=_KEEP_HINT)
    return path


def amount(size: float) -> str:
    for unit in ("bytes", "KB", "MB", "GB"):
        if size < 1000 or unit == "GB":
            return f"{size:.0f} {unit}" if unit == "bytes" else f"{size:.1f} {unit}"
        size /= 1000
    return ""


def _matches(path: Path) -> list[Path]:
    # The link-safe expansion the reader uses: Python's glob follows a link loop level by level.
    if any(ch in str(path) for ch in "*?["):
        return glob_files(str(path))
    return [path]


def check_overlap(path: Path, inputs: Sequence[tuple[str, Path]]) -> None:
    """Refuse an output that is, contains or sits inside one of ``inputs`` (links resolved).

    Examples
    --------
    >>> check_overlap(Path("/data/run"), [("the input", Path("/data/t.csv"))])
    >>> check_overlap(Path("/data"), [("the input", Path("/data/t.csv"))])
    Traceback (most recent call last):
    ...
    curate.errors.OutputError: the output /data contains the input /data/t.csv; nothing was written
      hint: choose an output path outside everything the command reads
    """
    real = Path(os.path.realpath(path))
    for what, source in inputs:
        for item in _matches(source):
            other = Path(os.path.realpath(item))
            if other == real or (path.exists() and item.exists() and os.path.samefile(path, item)):
                relation = "is"
            elif other.is_relative_to(real):
                relation = "contains"
            elif real.is_relative_to(other):
                relation = "sits inside"
            else:
                continue
            raise OutputError(f"the output {path} {relation} {what} {item}; nothing was written",
                              hint="choose an output path outside everything the command reads")
