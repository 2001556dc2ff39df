"""One stage's method with a cluster: partitioned on the workers, or with its queries there.

Methods declared ``runs_partitioned`` (condensing and hybrid ones) run per
stratified partition on the workers, then once over the union
(:mod:`curate.cluster.partitioned`); every other method runs here, its
neighbour queries going to the workers in blocks through the session.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from curate.cluster.partitioned import partitioned_selection
from curate.cluster.session import ClusterSession, cluster_session, current_session
from curate.errors import CurateError
from curate.methods.base import Selection
from curate.neighbours.search import kneighbors, radius_neighbors, served_here
from curate.settings import ClusterSettings
from curate.space.points import Space

if TYPE_CHECKING:
    from curate.methods.base import MethodInfo

__all__ = ["kneighbors_on_cluster", "radius_on_cluster", "run_on_cluster"]


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
    session = current_session(space.engine.cluster_address)
    found = None if session is None else session.kneighbors(
        space, k, queries=queries, reference=reference, exclude_self=exclude_self)
    if found is None:
        return kneighbors(served_here(space), k, queries=queries, reference=reference,
                          exclude_self=exclude_self)
    return found


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
    session = current_session(space.engine.cluster_address)
    pairs = None if session is None else session.radius_neighbors(
        space, radius, queries=queries, reference=reference, exclude_self=exclude_self)
    if pairs is None:
        return radius_neighbors(served_here(space), radius, queries=queries,
                                reference=reference, exclude_self=exclude_self)
    return pairs


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
    """A ``run_all`` for :func:`curate.cluster.partitioned.partitioned_selection` that uses the workers.

    The stage's rows, labels and mask are shipped once to every worker; each
    task gets only the positions of its rows.
    """

    def run_all(func: Callable[..., Selection], space: Space, labels: np.ndarray,
                removable: np.ndarray, rows: Sequence[np.ndarray], seed: int,
                params: Mapping[str, Any], what: str) -> list[Selection]:
        stage = session.ship(space, lambda: (served_here(space), labels, removable))
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
    """Run one stage's method with the cluster of ``space.engine.cluster_address``.

    Methods declared ``runs_partitioned`` (condensing and hybrid ones) run per
    stratified partition, then over the union; other methods run here with their
    neighbour queries on the workers.
    Opens a session for the call if none is open for that address.
    """
    session = current_session(space.engine.cluster_address)
    if session is None:
        with cluster_session(ClusterSettings(space.engine.cluster_address)) as opened:
            assert opened is not None
            return _run_stage(opened, info, space, labels, removable, seed, params)
    return _run_stage(session, info, space, labels, removable, seed, params)


def _run_stage(session: ClusterSession, info: MethodInfo, space: Space, labels: np.ndarray,
               removable: np.ndarray, seed: int, params: Mapping[str, Any]) -> Selection:
    before = session.blocks
    if info.runs_partitioned:
        sel = partitioned_selection(info.func, served_here(space), labels, removable=removable,
                                    seed=seed, params=params, parts=session.partitions,
                                    run_all=_runner(session))
        mode = "stratified partitions, then one pass over their union"
    else:
        sel = info.func(space, labels, removable=removable, seed=seed, **dict(params))
        mode = "neighbour queries in blocks over the workers; identical to a local run"
    sel.info["cluster"] = {"address": session.address, "mode": mode,
                           "tasks": session.blocks - before}
    return sel
