"""Writing an output all or nothing, holding it exclusively from before the work to the end.

Every command that writes (``run``, ``evaluate --out``, ``review``, ``diff
--out``) calls :func:`claim_output` right after it has read its pipeline file,
before any work:

1. :func:`~curate.io.output_checks.check_output` checks the path (exit 2 when it
   may not be written);
2. the lock beside the output (:mod:`curate.io.output_lock`) is taken for the
   whole run; a replace a killed run left half done is finished and stray
   unfinished outputs are removed (:mod:`curate.io.output_swap`), each said in an
   :class:`~curate.errors.OutputRecovered` warning;
3. :meth:`Claim.write_folder` or :meth:`Claim.write_file` writes under a
   temporary name and then puts the result in place; a full disk removes what
   was written and says how much space the output needs;
4. the claim is released on every exit path, Ctrl-C and SIGTERM included.

``CURATE_TEST_DISK_BYTES=N`` makes writing fail as on a full disk once more
than N bytes are written: the full-disk test uses it where it cannot mount a
small file system.
"""

from __future__ import annotations

import errno
import functools
import json
import os
import shutil
import time
import warnings
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

from curate.errors import OutputError, OutputRecovered
from curate.io.output_checks import MARKER, amount, check_output
from curate.io.output_lock import OutputLock, sweep_lock_leftovers
from curate.io.output_swap import Signals, journal_path, kill_point, new_partial, put_in_place, recover, sweep

__all__ = ["Claim", "OutputFile", "claim_output", "settle", "write_marker"]


@dataclass(frozen=True)
class OutputFile:
    """One file of an output folder: its name, how to write it, and about how many bytes it takes.

    Examples
    --------
    >>> OutputFile.text("summary.json", "{}\\n").size
    3
    """

    name: str
    write: Callable[[Path], object]
    size: int = 0

    @classmethod
    def text(cls, name: str, text: str) -> OutputFile:
        """A UTF-8 text file."""
        return cls(name, functools.partial(Path.write_text, data=text, encoding="utf-8"),
                   len(text.encode()))


def _size(path: Path) -> int:
    """Bytes the disk gives to ``path`` (whole blocks, as a full disk counts them)."""
    if not path.is_dir():
        return path.stat().st_blocks * 512 if path.exists() else 0
    return sum(f.stat().st_blocks * 512 for f in path.rglob("*") if f.is_file())


def _disk_full(err: BaseException) -> bool:
    if isinstance(err, OSError) and err.errno in (errno.ENOSPC, errno.EDQUOT):
        return True
    return any(os.strerror(code) in str(err) for code in (errno.ENOSPC, errno.EDQUOT))


def _test_disk_limit(written: Path) -> None:
    limit = os.environ.get("CURATE_TEST_DISK_BYTES")
    if limit and _size(written) > int(limit):
        raise OSError(errno.ENOSPC, f"{os.strerror(errno.ENOSPC)} (CURATE_TEST_DISK_BYTES={limit})")


class _Progress:
    """How far the writing of an output got, for the full-disk message."""

    def __init__(self, partial: Path, files: Sequence[OutputFile]) -> None:
        self.partial = partial
        self.files = files
        self.count = 0
        self.done = 0

    def wrote(self) -> None:
        """One more file is complete."""
        _test_disk_limit(self.partial)
        self.count += 1
        self.done = _size(self.partial)
        kill_point("writing")

    def current(self) -> str:
        return self.files[self.count].name if self.count < len(self.files) else MARKER

    def needed(self) -> int:
        """Bytes complete so far plus those expected of the files still to write, in whole
        blocks of the disk."""
        block = os.statvfs(self.partial.parent).f_frsize or 4096
        return self.done + sum(-(-f.size // block) * block for f in self.files[self.count:])


class Claim:
    """The exclusive right to write one output path, given by :func:`claim_output`."""

    def __init__(self, path: Path, signals: Signals) -> None:
        self.path = path
        self.written = False
        self._signals = signals
        self._partial: Path | None = None

    def write_folder(self, files: Sequence[OutputFile], kind: str = "run") -> None:
        """Write ``files`` into a new folder with :data:`MARKER`, then put it at the path."""
        partial = self._partial = new_partial(self.path)
        with self._room(partial, files) as progress:
            partial.mkdir()
            write_marker(partial, kind, ())
            for item in files:
                item.write(partial / item.name)
                progress.wrote()
            write_marker(partial, kind, [f.name for f in files])
        self._finish(partial)

    def write_file(self, write: Callable[[Path], object], size: int = 0) -> None:
        """Let ``write`` write a new file, then put it at the path."""
        partial = self._partial = new_partial(self.path)
        with self._room(partial, [OutputFile(self.path.name, write, size)]) as progress:
            write(partial)
            progress.wrote()
        self._finish(partial)

    @contextmanager
    def _room(self, partial: Path, files: Sequence[OutputFile]) -> Iterator[_Progress]:
        """Turn a full disk into a clean failure that says how much space the output needs."""
        progress = _Progress(partial, files)
        try:
            yield progress
        except Exception as err:
            if not _disk_full(err):
                raise
            written = _size(partial)
            self.discard()
            needed = max(progress.needed(), written)
            free = shutil.disk_usage(self.path.parent).free
            raise OutputError(f"the disk holding {self.path.parent} is full: writing "
                              f"{progress.current()} failed after {amount(written)}; the output "
                              f"needs about {amount(needed)} and {amount(free)} are free; nothing "
                              "was written", hint="free that much space there, or choose an "
                                                  "output path on another disk") from None

    def _finish(self, partial: Path) -> None:
        kill_point("written")
        with self._signals.deferred():
            put_in_place(partial, self.path)
            self._partial = None
            self.written = True

    def discard(self) -> None:
        """Remove what this claim wrote but did not put in place."""
        if self._partial is not None:
            if self._partial.is_dir():
                shutil.rmtree(self._partial, ignore_errors=True)
            else:
                self._partial.unlink(missing_ok=True)
            self._partial = None


def write_marker(folder: Path, kind: str, files: Sequence[str]) -> None:
    """Mark ``folder`` as written by curate: ``overwrite`` may replace it while it holds only
    ``files`` (and the marker).

    Examples
    --------
    >>> import tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> write_marker(folder, "run", ["kept.parquet"])
    >>> json.loads((folder / MARKER).read_text())["files"]
    ['kept.parquet']
    """
    (folder / MARKER).write_text(json.dumps({
        "written_by": "curate", "kind": kind, "files": list(files),
        "written_at": time.strftime("%Y-%m-%d %H:%M:%S %z"),
        "note": "curate --overwrite replaces this folder only while this file is here and the "
                "folder holds only the files listed"}, indent=2) + "\n", encoding="utf-8")


def _note(message: str) -> None:
    warnings.warn(message, OutputRecovered, stacklevel=4)


def _tidy(lock: OutputLock, path: Path) -> None:
    """With the lock held: say whose stale lock was taken, finish a half-done replace, sweep."""
    if lock.took_over is not None:
        _note(f"took over the lock of {path} from a run that is no longer running "
              f"({lock.took_over.describe()})")
    done = recover(path)
    if done is not None:
        _note(done)
    swept = sweep(path) + sweep_lock_leftovers(path)
    if swept:
        _note(f"removed what interrupted runs left unfinished beside {path}: {', '.join(swept)}")


def _make_parents(folder: Path) -> list[Path]:
    missing = []
    while not folder.exists():
        missing.append(folder)
        folder = folder.parent
    for made in reversed(missing):
        made.mkdir()
    return missing


@contextmanager
def claim_output(target: str | Path, *, overwrite: bool,
                 inputs: Sequence[tuple[str, Path]] = (), folder: bool = True,
                 owned: Callable[[Path], bool] | None = None) -> Iterator[Claim]:
    """Check ``target`` and hold it exclusively until the block ends (see the module notes).

    Examples
    --------
    >>> import tempfile
    >>> target = Path(tempfile.mkdtemp()) / "run"
    >>> with claim_output(target, overwrite=False) as claim:
    ...     claim.write_folder([OutputFile("a.txt", lambda p: p.write_text("a"))])
    >>> sorted(p.name for p in target.iterdir())
    ['a.txt', 'written-by-curate.json']
    >>> sorted(p.name for p in target.parent.iterdir())
    ['run']
    """
    path = check_output(target, overwrite=overwrite, inputs=inputs, folder=folder, owned=owned)
    lock = OutputLock(path)
    with Signals() as signals:
        claim = Claim(path, signals)
        made: list[Path] = []
        try:
            try:
                made = _make_parents(path.parent)
                lock.acquire()
            except OSError as err:
                raise OutputError(f"cannot write in {path.parent} ({err.strerror}); nothing was "
                                  "written", hint="choose an output path in a folder you can "
                                                  "write to") from None
            _tidy(lock, path)
            check_output(path, overwrite=overwrite, inputs=inputs, folder=folder, owned=owned)
            kill_point("claimed")
            yield claim
        finally:
            with signals.deferred():
                try:
                    claim.discard()
                finally:
                    lock.release()
                    for folder_made in made if not claim.written else ():
                        try:
                            folder_made.rmdir()
                        except OSError:
                            break


def settle(target: str | Path) -> None:
    """Finish an interrupted replace of ``target``, if a killed run left one, before reading it.

    Examples
    --------
    >>> settle("no/such/run")  # nothing to finish: nothing happens
    """
    path = Path(os.path.abspath(target))
    if not journal_path(path).exists():
        return
    lock = OutputLock(path)
    try:
        lock.acquire()
    except OSError as err:
        raise OutputError(f"cannot finish the interrupted replace of {path}: {err}",
                          hint=f"run curate where it may write in {path.parent}") from None
    try:
        _tidy(lock, path)
    finally:
        lock.release()
