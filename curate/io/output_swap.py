"""Putting a finished output in place so that a kill at any moment can be undone or finished.

An output is written complete under ``.NAME.partial-ID`` beside the final
path. A new path is then one rename. Replacing an existing folder takes three
steps, and a journal ``.NAME.swap.json`` written before the first one makes
them recoverable::

    journal written -> NAME renamed to .NAME.old-ID -> .NAME.partial-ID renamed to NAME
    -> .NAME.old-ID removed -> journal removed

Once the journal exists the new output is complete and the replace is
decided, so :func:`recover` (run by the next command that touches the path,
holding its lock) always finishes it. Before the journal exists nothing was
replaced, and the stray ``.NAME.partial-ID`` is removed by :func:`sweep`.

While an output is claimed, :class:`Signals` makes SIGTERM unwind like
Ctrl-C, and holds both back during the renames and the clean-up.

The environment variable ``CURATE_TEST_SIGNAL=STEP:SIGNAL`` makes the process
send itself SIGNAL (``KILL``, ``STOP``, ``TERM`` or ``INT``) at STEP; the kill
tests use it to stop a real run between two given steps (see :func:`kill_point`).
"""

from __future__ import annotations

import json
import os
import re
import shutil
import signal
import threading
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from types import FrameType
from typing import Any

from curate.errors import OutputError, Terminated

__all__ = ["STEPS", "Signals", "journal_path", "kill_point", "new_partial", "put_in_place", "recover",
           "sweep"]

STEPS = ("claimed", "writing", "written", "journal", "old-moved", "new-moved", "old-removed")


def kill_point(step: str) -> None:
    """Send this process the signal that ``CURATE_TEST_SIGNAL`` asks for at ``step``, if any.

    Only the kill and race tests set the variable; without it this does nothing.

    Examples
    --------
    >>> kill_point("written")  # the variable is not set: nothing happens
    """
    at, _, name = os.environ.get("CURATE_TEST_SIGNAL", "").partition(":")
    if at == step and name in ("KILL", "STOP", "TERM", "INT"):
        os.kill(os.getpid(), getattr(signal, f"SIG{name}"))


def journal_path(target: Path) -> Path:
    """The journal of an interrupted replace of ``target``: ``.NAME.swap.json`` beside it.

    Examples
    --------
    >>> journal_path(Path("runs/latest")).as_posix()
    'runs/.latest.swap.json'
    """
    return target.parent / f".{target.name}.swap.json"


def new_partial(target: Path) -> Path:
    """A fresh name ``.NAME.partial-ID`` beside ``target`` to write the output under.

    Examples
    --------
    >>> new_partial(Path("runs/latest")).name.startswith(".latest.partial-")
    True
    """
    return target.parent / f".{target.name}.partial-{uuid.uuid4().hex[:8]}"


def _remove(path: Path, tolerant: bool = False) -> None:
    """Remove a file or folder; ``tolerant`` leaves what cannot be removed to :func:`sweep`."""
    if path.is_dir() and not path.is_symlink():
        shutil.rmtree(path, ignore_errors=tolerant)
    else:
        path.unlink(missing_ok=True)


def put_in_place(partial: Path, target: Path) -> None:
    """Move the finished ``partial`` to ``target``, replacing a folder there through the journal."""
    if partial.is_file() or not target.exists():
        os.replace(partial, target)
        return
    old = target.parent / f".{target.name}.old-{partial.name.rsplit('-', 1)[1]}"
    journal = journal_path(target)
    scratch = journal.with_name(journal.name + ".tmp")
    scratch.write_text(json.dumps({"partial": partial.name, "old": old.name, "pid": os.getpid()}))
    os.replace(scratch, journal)
    kill_point("journal")
    os.rename(target, old)
    kill_point("old-moved")
    os.rename(partial, target)
    kill_point("new-moved")
    _remove(old, tolerant=True)
    kill_point("old-removed")
    journal.unlink()


def _journal(target: Path) -> tuple[Path, Path, str]:
    journal = journal_path(target)
    try:
        data = json.loads(journal.read_text(encoding="utf-8"))
        names = (str(data["partial"]), str(data["old"]))
    except (ValueError, KeyError, TypeError) as err:
        raise OutputError(f"the journal {journal} of an interrupted replace cannot be read ({err})",
                          hint=f"look at {target} and the .{target.name}.* entries beside it, keep "
                               f"the one you want as {target.name}, then delete {journal.name}"
                          ) from None
    prefix = re.escape(f".{target.name}.")
    if not all(re.fullmatch(prefix + kind + r"-[0-9a-f]{8}", name)
               for kind, name in zip(("partial", "old"), names, strict=True)):
        raise OutputError(f"the journal {journal} names paths curate does not write: {names}",
                          hint=f"delete {journal.name} if you wrote it yourself")
    return target.parent / names[0], target.parent / names[1], str(data.get("pid", "?"))


def recover(target: Path) -> str | None:
    """Finish a replace of ``target`` that a killed run left half done; say what was done.

    The caller holds the lock of ``target``. Returns None when there was
    nothing to recover. Every step is safe to repeat, so a kill during the
    recovery itself is recovered the next time.
    """
    if not journal_path(target).exists():
        return None
    partial, old, pid = _journal(target)
    if partial.exists() and target.exists() and old.exists():
        raise OutputError(f"an interrupted replace left {partial.name} and {old.name} beside "
                          f"{target}, and {target} has been made again since",
                          hint=f"keep the one you want as {target.name}, then delete "
                               f"{journal_path(target).name}")
    if partial.exists():
        if target.exists():
            os.rename(target, old)
        os.rename(partial, target)
        done = "put the new output in place"
    elif target.exists():
        done = "the new output was already in place"
    elif old.exists():
        os.rename(old, target)
        done = "the new output was gone, so the previous output was put back"
    else:
        done = "neither the new nor the previous output was left"
    if old.exists():
        _remove(old, tolerant=True)
    journal_path(target).unlink()
    return (f"finished the replace of {target} that an interrupted run (pid {pid}) left half "
            f"done: {done}")


def sweep(target: Path) -> list[str]:
    """Remove stray ``.NAME.partial-ID`` and ``.NAME.old-ID`` entries beside ``target``.

    Only curate writes names of this form; the caller holds the lock and has
    run :func:`recover`, so no run is using them. Returns the names removed.
    """
    pattern = re.compile(re.escape(f".{target.name}.") + r"(partial|old)-[0-9a-f]{8}|"
                         + re.escape(journal_path(target).name + ".tmp"))
    removed = []
    for entry in sorted(target.parent.iterdir()):
        if pattern.fullmatch(entry.name):
            _remove(entry)
            removed.append(entry.name)
    return removed


class Signals:
    """While a claim is held, SIGTERM unwinds like Ctrl-C (so that the claim is released), and
    during the final renames both signals wait until the output is in place."""

    def __init__(self) -> None:
        self.previous: dict[int, Any] = {}
        self.pending: int | None = None
        self.deferring = False

    def __enter__(self) -> Signals:
        # Python runs signal handlers in the main thread only, and only it may set them.
        if threading.current_thread() is threading.main_thread():
            for number in (signal.SIGINT, signal.SIGTERM):
                self.previous[number] = signal.signal(number, self._handle)
        return self

    def __exit__(self, *exc: object) -> None:
        for number, handler in self.previous.items():
            signal.signal(number, handler)

    def _handle(self, number: int, frame: FrameType | None) -> None:
        if self.deferring:
            self.pending = number
            return
        previous = self.previous.get(number)
        if callable(previous):
            previous(number, frame)
        elif previous != signal.SIG_IGN:
            raise Terminated() if number == signal.SIGTERM else KeyboardInterrupt()

    @contextmanager
    def deferred(self) -> Iterator[None]:
        """Hold signals back while the block runs; act on one that came when it ends."""
        self.deferring = True
        try:
            yield
        finally:
            self.deferring = False
            if self.pending is not None:
                self._handle(self.pending, None)
