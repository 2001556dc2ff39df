"""A Dask cluster session: the connection for one run, and neighbour queries in blocks on it.

A run with a ``[cluster]`` address (or ``curate run --cluster ADDRESS``) opens
one *session* around its stages: a ``distributed.Client`` connected to that
scheduler, or, for ``"local:N"``, to a ``LocalCluster`` of N worker processes
started for the run and shut down after it. Work is spread two ways:

* Neighbour queries (every stage but condensing and hybrid ones): the query
  rows are cut into blocks of ``block_rows``; the space is sent to every worker
  once per session (``scatter(broadcast=True)``), each block runs the local
  exact engine on a worker, and the blocks are joined in order. The result is
  identical to the single-machine run. Queries that fit in one block run here.
* Condensing and hybrid stages: per stratified partition on the workers, then
  once more over the union (:mod:`curate.cluster.partitioned`, run by
  :mod:`curate.cluster.stage`); an approximation, which the stage's ``info``
  says.

The neighbour engine never imports this module: :func:`cluster_session`
installs the session as the engine's executor
(:mod:`curate.neighbours.executor`, a context variable) on entry and removes
it on exit, so nothing leaks from one run into the next. The space carries
only the address (``EngineSettings.cluster_address``), and a space whose
address has no open session is served by the local engine, with the same
results. Dask is imported only when a session opens.

A worker that dies: the scheduler reruns its blocks on the other workers; a
block that keeps killing workers, or a cluster that does not answer within
``timeout`` seconds, stops the run with :class:`ClusterError` before anything
is written (the run folder is written only after every stage succeeded).
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import CancelledError
from contextlib import contextmanager
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from curate.errors import ClusterError, UsageError
from curate.neighbours.executor import current_executor, executor_installed
from curate.neighbours.search import kneighbors, radius_neighbors, served_here
from curate.settings import ClusterSettings, local_workers
from curate.space.points import Space

__all__ = ["ClusterSession", "cluster_session", "current_session"]

CONNECT_SECONDS = 15  # enough for a TCP connect and handshake; a dead address fails fast
_SHIPPED_KEPT = 2  # objects kept on the workers at once: the stage's space and one subset of it

@dataclass
class ClusterSession:
    """An open connection to a cluster for the length of one run, and the neighbour
    engine's executor for its address.

    ``blocks`` counts the tasks this session ran on the workers.
    """

    address: str
    client: Any
    settings: ClusterSettings
    blocks: int = 0
    _shipped: list[tuple[object, Any]] = field(default_factory=list)

    @property
    def partitions(self) -> int:
        """Partitions for condensing stages: as set, else one per worker."""
        if self.settings.partitions:
            return self.settings.partitions
        return max(1, len(self.client.nthreads()))

    def ship(self, key: object, build: Callable[[], object]) -> Any:
        """Send ``build()`` to every worker once per ``key`` object; later calls reuse it.

        Every worker holds a copy, so the data outlives any one worker's death.
        """
        for sent, future in self._shipped:
            if sent is key:
                return future
        # Wrapped in a list so that a tuple is sent as one object, not element by element.
        future = self.client.scatter([build()], broadcast=True, hash=False)[0]
        # Holding the key keeps its id from being reused while its future is cached.
        self._shipped = [*self._shipped[-(_SHIPPED_KEPT - 1):], (key, future)]
        return future

    def run(self, task: Callable[..., Any], calls: Sequence[tuple[Any, ...]], what: str) -> list[Any]:
        """Run ``task(*call)`` for every call on the workers and return the results in order."""
        from distributed import KilledWorker, wait

        futures = [self.client.submit(task, *call, pure=False, retries=self.settings.retries)
                   for call in calls]
        self.blocks += len(futures)
        hint = ("check that the scheduler and its workers are up and have the memory for the "
                "shipped rows (see their logs), then run again; nothing was written")
        try:
            wait(futures, timeout=self.settings.timeout)
            return list(self.client.gather(futures))
        except KilledWorker as err:
            raise ClusterError(f"cluster {self.address}: a worker died while computing {what}, "
                               f"and again when the task was rerun ({err})", hint=hint) from None
        except TimeoutError:
            raise ClusterError(f"cluster {self.address}: {what} did not finish within "
                               f"[cluster] timeout = {self.settings.timeout} s",
                               hint="raise timeout, or " + hint) from None
        except CancelledError as err:
            raise ClusterError(f"cluster {self.address}: workers died while computing {what}, "
                               "and the data sent to them was lost with them "
                               f"({type(err).__name__})", hint=hint) from None
        except OSError as err:
            raise ClusterError(f"cluster {self.address}: lost the connection while computing "
                               f"{what} ({type(err).__name__}: {err})", hint=hint) from None
        except ImportError as err:
            raise ClusterError(f"cluster {self.address}: a worker could not import {err.name!r} "
                               f"while computing {what}",
                               hint="install curate and its dependencies, in the versions used "
                                    "here, on every worker") from None
        finally:
            for future in futures:
                future.release()


    def _blocks(self, space: Space, queries: np.ndarray | None, reference: np.ndarray | None,
                task: Callable[..., Any], args: tuple[Any, ...]) -> list[Any] | None:
        """Run ``task`` per block of query rows on the workers; None when it should run here."""
        q = np.arange(space.n, dtype=np.int64) if queries is None else np.asarray(queries, np.int64)
        if len(q) <= self.settings.block_rows:
            return None
        shipped = self.ship(space, lambda: served_here(space))
        ref = None if reference is None else self.client.scatter(
            np.asarray(reference, dtype=np.int64), broadcast=True, hash=False)
        size = self.settings.block_rows
        calls = [(shipped, ref, q[s:s + size], *args) for s in range(0, len(q), size)]
        return self.run(task, calls, f"{len(calls)} blocks of neighbour queries")

    def kneighbors(self, space: Space, k: int, *, queries: np.ndarray | None,
                   reference: np.ndarray | None,
                   exclude_self: bool) -> tuple[np.ndarray, np.ndarray] | None:
        """The engine's k-nearest query in blocks on the workers; None to run it here."""
        parts = self._blocks(space, queries, reference, _kneighbors_block, (k, exclude_self))
        if parts is None:
            return None
        return np.concatenate([d for d, _ in parts]), np.concatenate([i for _, i in parts])

    def radius_neighbors(self, space: Space, radius: float, *, queries: np.ndarray | None,
                         reference: np.ndarray | None, exclude_self: bool
                         ) -> tuple[list[np.ndarray], list[np.ndarray]] | None:
        """The engine's radius query in blocks on the workers; None to run it here."""
        parts = self._blocks(space, queries, reference, _radius_block, (radius, exclude_self))
        if parts is None:
            return None
        return [d for ds, _ in parts for d in ds], [i for _, ix in parts for i in ix]


def _connect(settings: ClusterSettings) -> tuple[Any, Any]:
    """Return (client, the LocalCluster started for it or None)."""
    address = str(settings.address)
    workers = local_workers(address)
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise UsageError(f"[cluster] address {address!r} needs Dask, which is not installed",
                         hint="pip install 'curate[cluster]', or remove the [cluster] address to "
                              "run on this machine") from None
    try:
        if workers is None:
            return Client(address, timeout=CONNECT_SECONDS), None
        # Port 0: the scheduler's HTTP server takes a free loopback port, so a second cluster
        # on the machine neither warns about 8787 nor listens on every interface.
        cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                               dashboard_address="127.0.0.1:0")
        return Client(cluster), cluster
    except (OSError, TimeoutError) as err:
        raise ClusterError(f"[cluster] address {address!r}: no Dask scheduler answered within "
                           f"{CONNECT_SECONDS} s ({type(err).__name__}: {err})",
                           hint="start one (`dask scheduler`, then `dask worker ADDRESS` on each "
                                "machine), check the address, or use address = \"local:2\"") from None


@contextmanager
def cluster_session(settings: ClusterSettings) -> Iterator[ClusterSession | None]:
    """Open a cluster session for ``settings.address`` for the length of the block.

    Yields None, without importing Dask, when there is no address. A session
    already open for the same address is reused.

    Examples
    --------
    >>> with cluster_session(ClusterSettings()) as session:
    ...     print(session)
    None
    """
    if settings.address is None:
        yield None
        return
    open_now = current_session(settings.address)
    if open_now is not None:
        yield open_now
        return
    client, cluster = _connect(settings)
    session = ClusterSession(settings.address, client, settings)
    try:
        with executor_installed(session):
            yield session
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def current_session(address: str | None) -> ClusterSession | None:
    """The session open for ``address`` in this context, if any.

    Examples
    --------
    >>> current_session("local:2") is None
    True
    """
    executor = current_executor(address)
    return executor if isinstance(executor, ClusterSession) else None


def _kneighbors_block(space: Space, reference: np.ndarray | None, queries: np.ndarray, k: int,
                      exclude_self: bool) -> tuple[np.ndarray, np.ndarray]:
    return kneighbors(space, k, queries=queries, reference=reference, exclude_self=exclude_self)


def _radius_block(space: Space, reference: np.ndarray | None, queries: np.ndarray, radius: float,
                  exclude_self: bool) -> tuple[list[np.ndarray], list[np.ndarray]]:
    return radius_neighbors(space, radius, queries=queries, reference=reference,
                            exclude_self=exclude_self)
