"""Progress on stderr: a live line per step with a spinner and elapsed time on a terminal,
plain time-stamped lines when stderr is a file or a pipe, nothing at all when quiet."""

from __future__ import annotations

import sys
import time
from types import TracebackType
from typing import TextIO

from rich.console import Console
from rich.progress import Progress, SpinnerColumn, TaskID, TextColumn, TimeElapsedColumn

__all__ = ["Reporter"]


class Reporter:
    """A callable that takes one message per step; each message ends the step before it.

    A message that starts with spaces is the outcome of the step before: on a
    terminal it is added to that step's line instead of starting a new one.

    Use it as a context manager so that the live display is closed on error too.

    Examples
    --------
    >>> import io
    >>> out = io.StringIO()
    >>> with Reporter(quiet=False, stream=out) as say:
    ...     say("stage 1/2 'copies'")
    >>> "stage 1/2 'copies'" in out.getvalue()
    True
    >>> with Reporter(quiet=True, stream=out) as say:
    ...     say("not shown")
    >>> "not shown" in out.getvalue()
    False
    """

    def __init__(self, quiet: bool = False, stream: TextIO | None = None) -> None:
        self.quiet = quiet
        self.stream = stream if stream is not None else sys.stderr
        self.started = time.perf_counter()
        console = Console(file=self.stream)
        self.live = (not quiet) and console.is_terminal
        self._bar = Progress(SpinnerColumn(finished_text="[green]done"), TextColumn("{task.description}"),
                             TimeElapsedColumn(), console=console, transient=False) if self.live else None
        self._task: TaskID | None = None
        self._last: tuple[TaskID, str] | None = None

    def __enter__(self) -> Reporter:
        if self._bar is not None:
            self._bar.start()
        return self

    def __exit__(self, kind: type[BaseException] | None, error: BaseException | None,
                 trace: TracebackType | None) -> None:
        self._finish()
        if self._bar is not None:
            self._bar.stop()

    def _finish(self) -> None:
        if self._bar is not None and self._task is not None:
            self._bar.update(self._task, total=1, completed=1)
        self._task = None

    def __call__(self, message: str) -> None:
        if self.quiet:
            return
        if self._bar is None:
            stamp = time.perf_counter() - self.started
            print(f"[{stamp:7.2f} s] {message}", file=self.stream, flush=True)
            return
        if message.startswith(" ") and self._last is not None:
            task, text = self._last
            self._bar.update(task, description=f"{text}: {message.strip()}")
            self._finish()
            return
        self._finish()
        self._task = self._bar.add_task(message, total=None)
        self._last = (self._task, message)
