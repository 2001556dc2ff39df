"""The same stages on a Dask cluster.

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
  once more over the union (:mod:`curate.partitioned`); an approximation,
  which the stage's ``info`` says.

Why a context variable: the live client cannot travel inside the frozen,
picklable settings (the space is shipped to workers), and a module-level
client would outlive the run. :func:`cluster_session` sets the variable on
entry and resets it on exit, so nothing leaks from one run into the next; the
space carries only the address (``EngineSettings.cluster``), and a space whose
address has no open session is served by the local engine, with the same
results. Dask is imported only when a session opens.

A worker that dies: the scheduler reruns its blocks on the other workers; a
block that keeps killing workers, or a cluster that does not answer within
``timeout`` seconds, stops the run with :class:`ClusterError` before anything
is written (the run folder is written only after every stage succeeded).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator, Mapping, Sequence
from concurrent.futures import CancelledError
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING, Any

import numpy as np

from curate.errors import CurateError, UsageError
from curate.methods.base import Selection
from curate.partitioned import partitioned_selection
from curate.space import Space

if TYPE_CHECKING:
    from curate.methods.base import MethodInfo
    from curate.spec import ClusterSettings

__all__ = ["ClusterError", "ClusterSession", "PARTITIONED_FAMILIES", "cluster_session",
           "current_session", "kneighbors_on_cluster", "local_workers", "radius_on_cluster",
           "run_on_cluster"]

PARTITIONED_FAMILIES = ("condensing", "hybrid")
CONNECT_SECONDS = 15  # enough for a TCP connect and handshake; a dead address fails fast
_SHIPPED_KEPT = 2  # objects kept on the workers at once: the stage's space and one subset of it

_SESSION: ContextVar[ClusterSession | None] = ContextVar("curate_cluster_session", default=None)


class ClusterError(CurateError):
    """The cluster could not be reached or lost work it could not redo (exit code 1)."""


def local_workers(address: str) -> int | None:
    """Worker processes asked for by ``"local:N"`` (``"local"``: one per core), else None.

    Examples
    --------
    >>> local_workers("local:3"), local_workers("tcp://10.0.0.5:8786")
    (3, None)
    >>> local_workers("local:0")
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: [cluster] address 'local:0' does not give a number of workers >= 1
      hint: write "local:N" with N worker processes, e.g. "local:2", or a scheduler address
    """
    head, _, count = address.partition(":")
    if head != "local":
        return None
    if not count:
        return os.cpu_count() or 1
    if not count.isdigit() or int(count) < 1:
        raise UsageError(f"[cluster] address {address!r} does not give a number of workers >= 1",
                         hint="write \"local:N\" with N worker processes, e.g. \"local:2\", or a "
                              "scheduler address")
    return int(count)


@dataclass
class ClusterSession:
    """An open connection to a cluster for the length of one run.

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
        cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                               dashboard_address=None)
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
    >>> from curate.spec import ClusterSettings
    >>> with cluster_session(ClusterSettings()) as session:
    ...     print(session)
    None
    """
    if settings.address is None:
        yield None
        return
    open_now = _SESSION.get()
    if open_now is not None and open_now.address == settings.address:
        yield open_now
        return
    client, cluster = _connect(settings)
    session = ClusterSession(settings.address, client, settings)
    token = _SESSION.set(session)
    try:
        yield session
    finally:
        _SESSION.reset(token)
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
    session = _SESSION.get()
    return session if session is not None and address == session.address else None


def _local(space: Space) -> Space:
    """The same space, served by the local engine (what the workers compute with)."""
    return replace(space, engine=replace(space.engine, cluster=None))


def _blocks(space: Space, queries: np.ndarray | None, reference: np.ndarray | None,
            task: Callable[..., Any], args: tuple[Any, ...]) -> list[Any] | None:
    """Run ``task`` per block of query rows on the workers; None when it should run here."""
    session = current_session(space.engine.cluster)
    q = np.arange(space.n, dtype=np.int64) if queries is None else np.asarray(queries, np.int64)
    if session is None or len(q) <= session.settings.block_rows:
        return None
    shipped = session.ship(space, lambda: _local(space))
    ref = None if reference is None else session.client.scatter(
        np.asarray(reference, dtype=np.int64), broadcast=True, hash=False)
    size = session.settings.block_rows
    calls = [(shipped, ref, q[s:s + size], *args) for s in range(0, len(q), size)]
    return session.run(task, calls, f"{len(calls)} blocks of neighbour queries")


def _kneighbors_block(space: Space, reference: np.ndarray | None, queries: np.ndarray, k: int,
                      exclude_self: bool) -> tuple[np.ndarray, np.ndarray]:
    from curate.neighbours import kneighbors

    return kneighbors(space, k, queries=queries, reference=reference, exclude_self=exclude_self)


def _radius_block(space: Space, reference: np.ndarray | None, queries: np.ndarray, radius: float,
                  exclude_self: bool) -> tuple[list[np.ndarray], list[np.ndarray]]:
    from curate.neighbours import radius_neighbors

    return radius_neighbors(space, radius, queries=queries, reference=reference,
                            exclude_self=exclude_self)


def kneighbors_on_cluster(space: Space, k: int, *, queries: np.ndarray | None = None,
                          reference: np.ndarray | None = None,
                          exclude_self: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """:func:`curate.neighbours.kneighbors`, with the query rows split over the workers.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [3.0], [4.0]])  # no session open: runs here
    >>> kneighbors_on_cluster(s, 1)[1].ravel().tolist()
    [1, 0, 3, 2]
    """
    parts = _blocks(space, queries, reference, _kneighbors_block, (k, exclude_self))
    if parts is None:
        from curate.neighbours import kneighbors

        return kneighbors(_local(space), k, queries=queries, reference=reference,
                          exclude_self=exclude_self)
    return np.concatenate([d for d, _ in parts]), np.concatenate([i for _, i in parts])


def radius_on_cluster(space: Space, radius: float, *, queries: np.ndarray | None = None,
                      reference: np.ndarray | None = None,
                      exclude_self: bool = True) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """:func:`curate.neighbours.radius_neighbors`, with the query rows split over the workers.

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [3.0]])
    >>> [i.tolist() for i in radius_on_cluster(s, 1.0)[1]]
    [[1], [0], []]
    """
    parts = _blocks(space, queries, reference, _radius_block, (radius, exclude_self))
    if parts is None:
        from curate.neighbours import radius_neighbors

        return radius_neighbors(_local(space), radius, queries=queries, reference=reference,
                                exclude_self=exclude_self)
    return [d for ds, _ in parts for d in ds], [i for _, ix in parts for i in ix]


@dataclass(frozen=True)
class _Failure:
    """A curate error raised on a worker, sent back as data so its type and hint survive."""

    kind: type[CurateError]
    message: str
    hint: str | None


def _method_task(func: Callable[..., Selection], stage: tuple[Space, np.ndarray, np.ndarray],
                 rows: np.ndarray, seed: int, params: Mapping[str, Any]) -> Selection | _Failure:
    space, labels, removable = stage
    try:
        return func(space.subset(rows), labels[rows], removable=removable[rows], seed=seed,
                    **dict(params))
    except CurateError as err:
        return _Failure(type(err), err.message, err.hint)


def _runner(session: ClusterSession) -> Callable[..., list[Selection]]:
    """A ``run_all`` for :func:`curate.partitioned.partitioned_selection` that uses the workers.

    The stage's rows, labels and mask are shipped once to every worker; each
    task gets only the positions of its rows.
    """

    def run_all(func: Callable[..., Selection], space: Space, labels: np.ndarray,
                removable: np.ndarray, rows: Sequence[np.ndarray], seed: int,
                params: Mapping[str, Any], what: str) -> list[Selection]:
        stage = session.ship(space, lambda: (_local(space), labels, removable))
        calls = [(func, stage, r, seed, dict(params)) for r in rows]
        label = f"{len(rows)} partitions" if what == "partition" else "the pass over the union"
        results = session.run(_method_task, calls, label)
        for number, (result, r) in enumerate(zip(results, rows, strict=True), start=1):
            if isinstance(result, _Failure):
                where = (f"partition {number} of {len(rows)} ({len(r)} rows)" if what == "partition"
                         else f"the pass over the union of the partitions ({len(r)} rows)")
                fewer = "set fewer [cluster] partitions" if what == "partition" else None
                hint = "; or ".join(h for h in (result.hint, fewer) if h) or None
                raise result.kind(f"{where}: {result.message}", hint=hint)
        return results

    return run_all


def run_on_cluster(info: MethodInfo, space: Space, labels: np.ndarray, *, removable: np.ndarray,
                   seed: int, params: Mapping[str, Any]) -> Selection:
    """Run one stage's method with the cluster of ``space.engine.cluster``.

    Condensing and hybrid methods run per stratified partition, then over the
    union; other methods run here with their neighbour queries on the workers.
    Opens a session for the call if none is open for that address.
    """
    session = current_session(space.engine.cluster)
    if session is None:
        from curate.spec import ClusterSettings

        with cluster_session(ClusterSettings(space.engine.cluster)) as opened:
            assert opened is not None
            return _run_stage(opened, info, space, labels, removable, seed, params)
    return _run_stage(session, info, space, labels, removable, seed, params)


def _run_stage(session: ClusterSession, info: MethodInfo, space: Space, labels: np.ndarray,
               removable: np.ndarray, seed: int, params: Mapping[str, Any]) -> Selection:
    before = session.blocks
    if info.family in PARTITIONED_FAMILIES:
        sel = partitioned_selection(info.func, _local(space), labels, removable=removable,
                                    seed=seed, params=params, parts=session.partitions,
                                    run_all=_runner(session))
        mode = "stratified partitions, then one pass over their union"
    else:
        sel = info.func(space, labels, removable=removable, seed=seed, **dict(params))
        mode = "neighbour queries in blocks over the workers; identical to a local run"
    sel.info["cluster"] = {"address": session.address, "mode": mode,
                           "tasks": session.blocks - before}
    return sel
