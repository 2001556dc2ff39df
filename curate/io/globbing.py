"""Globs that meet every real file once, even through symbolic-link loops.

Python's :func:`glob.glob` follows symbolic links to folders under ``**`` with
no memory of where it has been: a link pointing back up the tree makes it list
the same file once per level until the system's link limit (41 copies of each
file), and two such links make the count grow exponentially. Here ``**``
enters each real folder (device and inode) once, and each real file is listed
once, under the first path found in sorted order. The pattern language is
glob's: ``*``, ``?``, ``[...]`` within a name, ``**`` for any depth; names
starting with a dot are matched only by a pattern part that starts with one.
"""

from __future__ import annotations

import fnmatch
import glob
import os
from collections.abc import Iterator
from pathlib import Path

__all__ = ["glob_files", "unique_files"]


def _identity(path: Path) -> tuple[int, int] | None:
    try:
        stat = path.stat()
    except (OSError, RuntimeError):  # a dangling link or a link loop names no real file
        return None
    return stat.st_dev, stat.st_ino


def unique_files(paths: list[Path]) -> list[Path]:
    """The paths that are regular files, each real file once (the first of its names kept).

    Examples
    --------
    >>> import tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> _ = (folder / "a.csv").write_text("x\\n1\\n")
    >>> (folder / "b.csv").symlink_to(folder / "a.csv")
    >>> [p.name for p in unique_files([folder / "a.csv", folder / "b.csv"])]
    ['a.csv']
    """
    seen: set[tuple[int, int]] = set()
    files = []
    for path in paths:
        key = _identity(path)
        if key is not None and key not in seen and path.is_file():
            seen.add(key)
            files.append(path)
    return files


def _children(folder: Path, part: str) -> Iterator[Path]:
    try:
        names = sorted(os.listdir(folder))
    except OSError:
        return
    for name in names:
        if fnmatch.fnmatchcase(name, part) and (part.startswith(".") or not name.startswith(".")):
            yield folder / name


def _match(folder: Path, parts: tuple[str, ...], entered: set[tuple[int, int]]) -> Iterator[Path]:
    if not parts:
        yield folder
        return
    head, rest = parts[0], parts[1:]
    if head == "**":
        key = _identity(folder)
        if key is None or key in entered:
            return
        entered.add(key)
        yield from _match(folder, rest, entered)
        for child in _children(folder, "*"):
            if child.is_dir():
                yield from _match(child, parts, entered)
    elif glob.has_magic(head):
        for child in _children(folder, head):
            yield from _match(child, rest, entered)
    elif os.path.lexists(folder / head):
        yield from _match(folder / head, rest, entered)


def glob_files(pattern: str) -> list[Path]:
    """The regular files ``pattern`` matches, sorted, each real file once.

    Examples
    --------
    >>> import tempfile
    >>> root = Path(tempfile.mkdtemp())
    >>> (root / "a" / "b").mkdir(parents=True)
    >>> _ = (root / "a" / "b" / "t.csv").write_text("x\\n1\\n")
    >>> (root / "a" / "b" / "up").symlink_to(root / "a")  # a loop: a/b/up/b/up/...
    >>> [str(p.relative_to(root)) for p in glob_files(str(root / "**" / "*.csv"))]
    ['a/b/t.csv']
    """
    anchor = Path(pattern).anchor
    parts = Path(pattern).parts[1:] if anchor else Path(pattern).parts
    start = Path(anchor) if anchor else Path()
    found = sorted(_match(start, tuple(parts), set()))
    return unique_files(found)
