"""Where neighbour queries may be sent instead of running here: an executor in a context variable.

The engine never imports the cluster code. A cluster session installs itself
as the executor for its address (:func:`executor_installed`) for the length of
a run; a space whose ``engine.cluster_address`` names that address has its
queries offered to the executor, which answers them (in blocks on its workers)
or returns None to have them run here. A space whose address has no executor
installed is served here, with the same results.

Why a context variable: the live connection cannot travel inside the frozen,
picklable settings (the space is shipped to workers), and a module-level
variable would outlive the run; resetting the variable on exit means nothing
leaks from one run into the next.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from typing import TYPE_CHECKING, Protocol

import numpy as np

if TYPE_CHECKING:
    from curate.space.points import Space

__all__ = ["Executor", "current_executor", "executor_installed"]


class Executor(Protocol):
    """Runs neighbour queries elsewhere; each method returns None to have them run here."""

    @property
    def address(self) -> str: ...

    def kneighbors(self, space: Space, k: int, *, queries: np.ndarray | None,
                   reference: np.ndarray | None,
                   exclude_self: bool) -> tuple[np.ndarray, np.ndarray] | None: ...

    def radius_neighbors(self, space: Space, radius: float, *, queries: np.ndarray | None,
                         reference: np.ndarray | None, exclude_self: bool
                         ) -> tuple[list[np.ndarray], list[np.ndarray]] | None: ...


_EXECUTOR: ContextVar[Executor | None] = ContextVar("curate_neighbour_executor", default=None)


@contextmanager
def executor_installed(executor: Executor) -> Iterator[Executor]:
    """Install ``executor`` for the length of the block, and remove it on exit."""
    token = _EXECUTOR.set(executor)
    try:
        yield executor
    finally:
        _EXECUTOR.reset(token)


def current_executor(address: str | None) -> Executor | None:
    """The executor installed in this context for ``address``, if any.

    Examples
    --------
    >>> current_executor("local:2") is None
    True
    """
    executor = _EXECUTOR.get()
    if executor is None or address is None or executor.address != address:
        return None
    return executor
