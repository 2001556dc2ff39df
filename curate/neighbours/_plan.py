"""What a neighbour query asks for, and how it is cut into pieces that fit in memory.

Every backend receives the same :class:`Request`: the matrix, the metric, the
query positions, the reference positions sorted ascending (so that a lower
index means a lower position, which is how ties are broken) and, per query,
the index of its own row among the reference rows when it must be left out.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from typing import TypeVar

import numpy as np

from curate.errors import UsageError

__all__ = ["Plan", "Request", "make_request", "plan_for", "run_tasks", "worker_count"]

T = TypeVar("T")


@dataclass(frozen=True)
class Request:
    """One neighbour query, normalised.

    ``reference`` is ascending and unique; ``self_index[i]`` is the index in
    ``reference`` of query ``i``'s own position, or -1 when it is absent or
    not to be left out.
    """

    matrix: np.ndarray
    metric: str
    queries: np.ndarray
    reference: np.ndarray
    self_index: np.ndarray

    @property
    def dims(self) -> int:
        """Number of columns of the matrix."""
        return int(self.matrix.shape[1])

    def rows(self, which: np.ndarray) -> Request:
        """The same request restricted to the queries at indices ``which``."""
        return Request(self.matrix, self.metric, self.queries[which], self.reference,
                       self.self_index[which])


def _positions(n: int, which: np.ndarray | None, role: str) -> np.ndarray:
    if which is None:
        return np.arange(n, dtype=np.int64)
    pos = np.asarray(which, dtype=np.int64).reshape(-1)
    if len(pos) and (pos.min() < 0 or pos.max() >= n):
        bad = pos[(pos < 0) | (pos >= n)]
        raise UsageError(f"{role} position {int(bad[0])} is outside the {n} rows of the space",
                         hint=f"pass {role} positions from 0 to {n - 1}")
    return pos


def make_request(matrix: np.ndarray, metric: str, queries: np.ndarray | None,
                 reference: np.ndarray | None, exclude_self: bool) -> Request:
    """Check positions and build the :class:`Request` every backend uses.

    Examples
    --------
    >>> r = make_request(np.zeros((4, 1)), "euclidean", [2, 0], [3, 2, 1], True)
    >>> r.reference.tolist(), r.self_index.tolist()
    ([1, 2, 3], [1, -1])
    """
    n = int(matrix.shape[0])
    q = _positions(n, queries, "query")
    r = np.sort(_positions(n, reference, "reference"))
    if len(r) > 1 and np.any(r[1:] == r[:-1]):
        dup = int(r[1:][r[1:] == r[:-1]][0])
        raise UsageError(f"reference position {dup} is given more than once",
                         hint="pass each reference position once")
    self_index = np.full(len(q), -1, dtype=np.int64)
    if exclude_self and len(r):
        at = np.minimum(np.searchsorted(r, q), len(r) - 1)
        hit = r[at] == q
        self_index[hit] = at[hit]
    return Request(np.ascontiguousarray(matrix, dtype=np.float64), metric, q, r, self_index)


def worker_count() -> int:
    """Cores this process may use (the affinity mask, not the machine's total)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # platforms without affinity masks
        return max(1, os.cpu_count() or 1)


def run_tasks(threads: int, starts: Sequence[int], task: Callable[[int], T]) -> list[T]:
    """``[task(s) for s in starts]`` on up to ``threads`` threads, results in order.

    Examples
    --------
    >>> run_tasks(2, range(0, 6, 2), lambda s: s * 10)
    [0, 20, 40]
    """
    if threads <= 1 or len(starts) <= 1:
        return [task(s) for s in starts]
    with ThreadPoolExecutor(threads) as pool:
        return list(pool.map(task, starts))


@dataclass(frozen=True)
class Plan:
    """How a query is cut: rows per task, reference rows per tile and per slab, threads.

    ``width`` is the number of candidates each query keeps while scanning;
    ``rows`` the number of queries whose candidates are held at once.
    """

    block: int
    tile: int
    slab: int
    threads: int
    width: int
    rows: int = 2**62
    memory_mb: int = 1024


def plan_for(memory_mb: int, n_query: int, n_ref: int, dims: int, k: int,
             threads: int | None = None) -> Plan:
    """Choose tile sizes so that the temporaries stay within ``memory_mb``.

    Half the budget is shared by the threads (each holds one distance tile,
    sized to stay in a core's cache when the budget allows, and the float64
    rows it converts); a quarter holds the converted reference slab and a
    quarter the candidates of the queries in flight.

    Examples
    --------
    >>> p = plan_for(1024, 100_000, 100_000, 20, 4)
    >>> (p.block, p.tile, p.width)
    (1024, 512, 6)
    >>> p = plan_for(1, 100_000, 100_000, 20, 4, threads=2)
    >>> 2 * p.block * (p.tile * 8 + 3 * 20 * 8) <= 2**19
    True
    """
    budget = max(1, memory_mb) * 2**20
    # A few spare candidates let almost every row be certified at once (measured: with
    # k + 2 at 50,000 random rows, none needed a second pass); more slow the scan down.
    width = k + max(2, k // 2)
    workers = threads if threads is not None else worker_count()
    workers = max(1, min(workers, -(-n_query // 64)))
    per_thread = budget // (2 * workers)
    # Tall, narrow tiles measured fastest here: the product runs near its best and the
    # threshold check skips more of each row (1024 x 512 float32 = 2 MiB, one core's cache).
    tile = int(min(512, max(1, n_ref)))
    block = 1024
    row_bytes = 3 * dims * 8  # float64 rows being converted

    def cost(b: int, t: int) -> int:
        return b * (t * 8 + row_bytes)

    while cost(block, tile) > per_thread and tile > 64:
        tile //= 2
    while cost(block, tile) > per_thread and block > 1:
        block //= 2
    slab = max(tile, budget // 4 // ((dims + 1) * 8))
    rows = max(block, budget // 4 // (width * 12 + (dims + 1) * 4 + 40))
    return Plan(block=block, tile=tile, slab=int(min(slab, max(1, n_ref))), threads=workers,
                width=width, rows=rows, memory_mb=max(1, memory_mb))
