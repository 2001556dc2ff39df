"""What the engine did: one record per k-nearest query, collected while a stage runs."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import asdict, dataclass

__all__ = ["EngineCall", "note", "recording", "summarise_calls"]


@dataclass(frozen=True)
class EngineCall:
    """One k-nearest query as the engine ran it: backend, why, sizes and, when approximate,
    the recall measured on its own seeded sample of queries."""

    backend: str
    reason: str
    k: int
    queries: int
    reference: int
    recall: float = 1.0
    sample: int = 0
    probes: int = 0
    lists: int = 0


_CALLS: ContextVar[list[EngineCall] | None] = ContextVar("curate_engine_calls", default=None)


@contextmanager
def recording() -> Iterator[list[EngineCall]]:
    """Collect an :class:`EngineCall` for every k-nearest query made inside the block.

    Examples
    --------
    >>> from curate.neighbours import kneighbors
    >>> from curate.space import Space
    >>> with recording() as calls:
    ...     _ = kneighbors(Space.from_matrix([[0.0], [1.0], [3.0]]), 1)
    >>> [(c.backend, c.k, c.queries) for c in calls]
    [('brute', 1, 3)]
    """
    calls: list[EngineCall] = []
    token = _CALLS.set(calls)
    try:
        yield calls
    finally:
        _CALLS.reset(token)


def note(call: EngineCall) -> None:
    """Add ``call`` to the records of the innermost :func:`recording` block, if any."""
    calls = _CALLS.get()
    if calls is not None:
        calls.append(call)


def summarise_calls(calls: list[EngineCall]) -> dict[str, object]:
    """What a stage's neighbour queries used, for summary.json: backends, and for the
    approximate ones their lowest measured recall and the queries it was measured on.

    Examples
    --------
    >>> summarise_calls([EngineCall("fast", "why", 3, 10, 10)])
    {'backends': ['fast'], 'queries': 1, 'exact': True}
    """
    out: dict[str, object] = {"backends": sorted({c.backend for c in calls}),
                              "queries": len(calls)}
    approx = [c for c in calls if c.backend == "approximate"]
    out["exact"] = not approx
    if approx:
        worst = min(approx, key=lambda c: c.recall)
        out.update({"recall": worst.recall, "recall_sample": sum(c.sample for c in approx),
                    "approximate_queries": len(approx),
                    "lowest": {key: value for key, value in asdict(worst).items()
                               if key not in ("backend", "reason")}})
    return out
