"""The neighbour engine: k nearest and radius neighbours for every stage, on any backend.

The entry points are :func:`kneighbors` and :func:`radius_neighbors`
(:mod:`.search`); :func:`choose_backend` and the backend table are in
:mod:`.backends`; :func:`recording` collects what each query used
(:mod:`.calls`); a cluster reaches the engine only through the executor of
:mod:`.executor`. Modules whose names start with ``_`` are the backends and
their kernels, private to this package.
"""

from curate.neighbours.backends import choose_backend
from curate.neighbours.calls import EngineCall, recording, summarise_calls
from curate.neighbours.search import (
    EngineReport,
    engine_report,
    kneighbors,
    radius_neighbors,
    require_neighbours,
)

__all__ = ["EngineCall", "EngineReport", "choose_backend", "engine_report", "kneighbors",
           "radius_neighbors", "recording", "require_neighbours", "summarise_calls"]
