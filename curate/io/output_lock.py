"""An exclusive claim of an output path: a lock file beside it, held for the whole run.

The lock ``.NAME.lock`` sits in the output's folder and records the pid, host,
start time and command of the run holding it. It is written complete under a
private name (created with ``O_EXCL``) and then linked into place, so nobody
ever reads a half-written lock, and two runs cannot both link it. The holder
keeps an ``flock`` on it, which the kernel drops when the process ends, however
it ends (even SIGKILL); a lock whose ``flock`` can be taken is therefore stale,
and the next run takes it over.
"""

from __future__ import annotations

import fcntl
import json
import os
import re
import socket
import sys
import time
import uuid
from dataclasses import asdict, dataclass
from pathlib import Path

from curate.errors import OutputError

__all__ = ["Holder", "OutputLock", "lock_path", "sweep_lock_leftovers"]


@dataclass(frozen=True)
class Holder:
    """Who holds (or held) a lock: process id, host, start time and command line."""

    pid: int
    host: str
    started: str
    command: str

    def describe(self) -> str:
        """One line for messages.

        Examples
        --------
        >>> Holder(41, "rig-2", "2025-01-01 08:00:00 +0000", "curate run p.toml").describe()
        'pid 41 on rig-2, started 2025-01-01 08:00:00 +0000: curate run p.toml'
        """
        return f"pid {self.pid} on {self.host}, started {self.started}: {self.command}"


def lock_path(target: Path) -> Path:
    """The lock file of ``target``: ``.NAME.lock`` in the same folder.

    Examples
    --------
    >>> lock_path(Path("runs/latest")).as_posix()
    'runs/.latest.lock'
    """
    return target.parent / f".{target.name}.lock"


def _me() -> Holder:
    program = Path(sys.argv[0]).name if sys.argv and sys.argv[0] else sys.executable
    command = " ".join(["python -m curate" if program == "__main__.py" else program, *sys.argv[1:]])
    return Holder(os.getpid(), socket.gethostname(), time.strftime("%Y-%m-%d %H:%M:%S %z"), command)


def _read(fd: int) -> Holder | None:
    os.lseek(fd, 0, os.SEEK_SET)
    try:
        data = json.loads(os.read(fd, 1 << 16))
        return Holder(int(data["pid"]), str(data["host"]), str(data["started"]),
                      str(data["command"]))
    except (ValueError, KeyError, TypeError):
        return None


def _inode(path: Path) -> int:
    try:
        return os.stat(path).st_ino
    except FileNotFoundError:
        return -1


def _busy(target: Path, lock: Path, holder: Holder | None) -> OutputError:
    who = holder.describe() if holder else "another process"
    return OutputError(f"{target} is being written by another curate run right now: {who}; "
                       "nothing was written",
                       hint=f"wait for that run to end, or choose another output path (its lock is "
                            f"{lock})")


class OutputLock:
    """Hold ``.NAME.lock`` beside ``target`` from :meth:`acquire` to :meth:`release`.

    ``took_over`` names the dead run whose stale lock was taken over, if any.

    Examples
    --------
    >>> import tempfile
    >>> target = Path(tempfile.mkdtemp()) / "run"
    >>> lock = OutputLock(target)
    >>> lock.acquire()
    >>> OutputLock(target).acquire()  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    curate.errors.OutputError: ... is being written by another curate run right now: pid ...
    >>> lock.release()
    >>> lock_path(target).exists()
    False
    """

    def __init__(self, target: Path) -> None:
        self.target = target
        self.path = lock_path(target)
        self.took_over: Holder | None = None
        self._fd: int | None = None

    def acquire(self) -> None:
        """Take the lock, or raise :class:`OutputError` naming the run that holds it."""
        mine = self.path.with_name(f"{self.path.name}-{uuid.uuid4().hex[:8]}")
        fd = os.open(mine, os.O_CREAT | os.O_EXCL | os.O_RDWR, 0o644)
        try:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except OSError as err:
                raise OutputError(f"cannot lock {self.path}: {err.strerror}; the file system "
                                  "does not support locks; nothing was written",
                                  hint="choose an output path on a local disk") from None
            os.write(fd, json.dumps(asdict(_me())).encode())
            # Each pass either places the lock, finds a live holder, or saw the lock change
            # hands under it (released or taken over meanwhile), which cannot go on for long.
            for _ in range(1000):
                if self._place(mine):
                    self._fd = fd
                    return
            raise OutputError(f"could not take the lock {self.path}: it kept changing hands",
                              hint="other curate runs keep writing to this output path; "
                                   "wait for them to end")
        except BaseException:
            os.close(fd)
            mine.unlink(missing_ok=True)
            raise

    def _place(self, mine: Path) -> bool:
        try:
            os.link(mine, self.path)
            mine.unlink()
            return True
        except FileExistsError:
            pass
        try:
            theirs = os.open(self.path, os.O_RDWR)
        except FileNotFoundError:
            return False
        try:
            try:
                fcntl.flock(theirs, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                raise _busy(self.target, self.path, _read(theirs)) from None
            if os.fstat(theirs).st_ino != _inode(self.path):
                return False
            self.took_over = _read(theirs) or Holder(0, "an unknown host", "at an unknown time",
                                                     "unknown")
            os.replace(mine, self.path)
            return True
        finally:
            os.close(theirs)

    def release(self) -> None:
        """Remove the lock file (if it is still ours) and drop the ``flock``."""
        if self._fd is None:
            return
        try:
            if os.fstat(self._fd).st_ino == _inode(self.path):
                self.path.unlink(missing_ok=True)
        finally:
            os.close(self._fd)
            self._fd = None


def sweep_lock_leftovers(target: Path) -> list[str]:
    """Remove private lock files of ``target`` left by runs killed while taking the lock.

    A private lock file still held (``flock``) belongs to a run taking the lock
    right now and stays. Returns the names removed.
    """
    pattern = re.compile(re.escape(lock_path(target).name) + r"-[0-9a-f]{8}")
    removed = []
    for entry in target.parent.iterdir():
        if not pattern.fullmatch(entry.name) or entry.is_symlink() or not entry.is_file():
            continue
        fd = os.open(entry, os.O_RDONLY)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            continue
        else:
            entry.unlink(missing_ok=True)
            removed.append(entry.name)
        finally:
            os.close(fd)
    return removed
