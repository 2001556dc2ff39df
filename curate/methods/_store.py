"""The growing store of condensing methods: each row's nearest store member, kept up to date.

Condensing (CNN, FCNN) grows a store of kept rows and asks again and again
which store member is nearest to each row outside it. Naive CNN refits a
classifier after every added row; here nothing is ever recomputed:

* every row's k nearest neighbours among all rows are found once, through
  :func:`curate.neighbours.kneighbors`. The first listed neighbour that is in
  the store is exactly the row's nearest store member (the list is ordered by
  distance, then position, and the store only grows), so most questions are
  answered by a walk down a short list;
* a row none of whose listed neighbours is in the store yet compares itself
  only with the members that joined since it last looked (it remembers its
  nearest member, distance and how many members it has seen). FCNN asks
  that for many rows at once, in one neighbour query against the new
  members; Hart's passes ask it row by row, in a compiled scan.

Ties in distance go to the lower position, as everywhere in curate. The
compiled kernels (numba) compute distances like the neighbour engine (a
sequential sum over the columns, then the root for Euclidean distance), so
list answers and scan answers agree exactly. Spaces whose distance is not a
plain Lp distance over the matrix (for example with missing values kept)
take the same steps in plain Python through ``space.distances``. With the
opt-in approximate neighbour backend a list can miss a neighbour, and then
the kept set can miss consistency by the rows concerned; kept_as still
carries the row's label.
"""

from __future__ import annotations

import numpy as np

from curate.neighbours.jit import compiled
from curate.neighbours.search import kneighbors
from curate.space.points import Space

__all__ = ["LIST_LENGTH", "NearestStore"]

LIST_LENGTH = 16  # neighbours listed per row: long enough that few rows ever need a scan


@compiled()
def _scan(x, store_x, ids, start, stop, best, near, manhattan):  # pragma: no cover - compiled
    """Nearest of the store rows ``start:stop`` to ``x``, starting from the known (best, near)."""
    for t in range(start, stop):
        acc = 0.0
        for c in range(x.shape[0]):
            diff = x[c] - store_x[t, c]
            if manhattan:
                acc += abs(diff)
            else:
                acc += diff * diff
        dist = acc if manhattan else np.sqrt(acc)
        if dist < best or (dist == best and ids[t] < near):
            best = dist
            near = ids[t]
    return best, near


@compiled()
def _bring_up_to_date(i, x, nbr, nbr_d, in_store, store_x, ids, size, best, near, seen,
                      manhattan):  # pragma: no cover - compiled
    """Make (best[i], near[i]) the nearest among the first ``size`` store members."""
    if seen[i] == size:
        return
    for j in range(nbr.shape[1]):
        c = nbr[i, j]
        if in_store[c]:
            best[i] = nbr_d[i, j]
            near[i] = c
            seen[i] = size
            return
    best[i], near[i] = _scan(x[i], store_x, ids, seen[i], size, best[i], near[i], manhattan)
    seen[i] = size


@compiled()
def _hart_kernel(order, codes, x, nbr, nbr_d, in_store, store_x, ids, size, best, near, seen,
                 joined, manhattan):  # pragma: no cover - compiled
    passes = 0
    changed = True
    while changed:
        passes += 1
        changed = False
        for i in order:
            if in_store[i]:
                continue
            _bring_up_to_date(i, x, nbr, nbr_d, in_store, store_x, ids, size, best, near, seen,
                              manhattan)
            if codes[near[i]] != codes[i]:
                store_x[size] = x[i]
                ids[size] = i
                in_store[i] = True
                joined[i] = passes
                size += 1
                changed = True
    return size, passes


class NearestStore:
    """A growing store of kept rows and, for every row, its nearest store member.

    Parameters
    ----------
    space : Space
        The rows.
    list_length : int
        Neighbours listed per row (fewer when the space is smaller).

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [5.0], [6.0]])
    >>> st = NearestStore(s)
    >>> st.add([0], when=0)
    >>> st.hart(np.array([0, 0, 1, 1]), np.arange(4))
    2
    >>> st.members.tolist(), st.nearest()[0].tolist()
    ([0, 2], [0, 0, 2, 2])
    """

    def __init__(self, space: Space, list_length: int = LIST_LENGTH) -> None:
        n = space.n
        self.space = space
        self.compiled = space.metric in ("euclidean", "manhattan") and \
            getattr(space, "gaps", None) is None
        k = min(list_length, n - 1)
        if k > 0:
            self.list_d, self.list_pos = kneighbors(space, k)
        else:
            self.list_d, self.list_pos = np.zeros((n, 0)), np.zeros((n, 0), dtype=np.int64)
        self.in_store = np.zeros(n, dtype=bool)
        self.best = np.full(n, np.inf)
        self.near = np.full(n, -1, dtype=np.int64)
        self.seen = np.zeros(n, dtype=np.int64)
        self.joined = np.zeros(n, dtype=np.int64)
        self.ids = np.empty(n, dtype=np.int64)
        self.size = 0
        self.store_x = np.empty_like(space.matrix) if self.compiled else space.matrix[:0]

    @property
    def members(self) -> np.ndarray:
        """Store members in the order they joined."""
        return self.ids[:self.size]

    def add(self, rows: np.ndarray | list[int], when: int) -> None:
        """Put ``rows`` (not yet members) into the store; ``when`` is recorded as their step."""
        rows = np.asarray(rows, dtype=np.int64)
        rows = rows[~self.in_store[rows]]
        end = self.size + len(rows)
        self.ids[self.size:end] = rows
        if self.compiled:
            self.store_x[self.size:end] = self.space.matrix[rows]
        self.in_store[rows] = True
        self.joined[rows] = when
        self.size = end

    def _state(self) -> tuple:
        return (self.space.matrix, self.list_pos, self.list_d, self.in_store, self.store_x,
                self.ids, self.size, self.best, self.near, self.seen)

    def refresh(self, rows: np.ndarray) -> None:
        """Bring the nearest member of each of ``rows`` (outside the store) up to date.

        Rows with a listed neighbour in the store take the first one; the others
        are compared, in one neighbour query, with the members they have not seen.
        """
        rows = np.asarray(rows, dtype=np.int64)
        rows = rows[self.seen[rows] < self.size]
        hit = self.in_store[self.list_pos[rows]]
        listed = hit.any(axis=1)
        if listed.any():
            done, first = rows[listed], hit[listed].argmax(axis=1)
            self.best[done] = self.list_d[done, first]
            self.near[done] = self.list_pos[done, first]
        rest = rows[~listed]
        if len(rest):
            fresh = self.ids[int(self.seen[rest].min()):self.size]
            dist, pos = kneighbors(self.space, 1, queries=rest, reference=fresh,
                                   exclude_self=False)
            dist, pos = dist[:, 0], pos[:, 0]
            better = (dist < self.best[rest]) | ((dist == self.best[rest]) &
                                                 (pos < self.near[rest]))
            self.best[rest[better]], self.near[rest[better]] = dist[better], pos[better]
        self.seen[rows] = self.size

    def hart(self, codes: np.ndarray, order: np.ndarray) -> int:
        """Run Hart's passes in ``order`` until one adds nothing; return the number of passes.

        A row whose nearest member carries another label joins at once, so later
        rows of the same pass already see it (Hart 1968).
        """
        codes = np.ascontiguousarray(codes, dtype=np.int64)
        order = np.ascontiguousarray(order, dtype=np.int64)
        if self.compiled:
            self.size, passes = _hart_kernel(  # type: ignore[call-arg]
                order, codes, *self._state(), self.joined, self.space.metric == "manhattan")
            return int(passes)
        passes, changed = 0, True
        while changed:
            passes, changed = passes + 1, False
            for i in order:
                if not self.in_store[i]:
                    self._bring_plain(int(i))
                    if codes[self.near[i]] != codes[i]:
                        self.add([int(i)], when=passes)
                        changed = True
        return passes

    def _bring_plain(self, i: int) -> None:
        if self.seen[i] == self.size:
            return
        listed = np.flatnonzero(self.in_store[self.list_pos[i]])
        if len(listed):
            self.best[i], self.near[i] = self.list_d[i, listed[0]], self.list_pos[i, listed[0]]
        else:
            fresh = self.ids[self.seen[i]:self.size]
            dist = self.space.distances([i], fresh)[0]
            first = np.lexsort((fresh, dist))[0]
            if dist[first] < self.best[i] or (dist[first] == self.best[i]
                                              and fresh[first] < self.near[i]):
                self.best[i], self.near[i] = dist[first], fresh[first]
        self.seen[i] = self.size

    def nearest(self) -> tuple[np.ndarray, np.ndarray]:
        """Return every row's nearest member and distance now (members: themselves, 0)."""
        outside = np.flatnonzero(~self.in_store)
        self.refresh(outside)
        near, best = self.near.copy(), self.best.copy()
        near[self.in_store], best[self.in_store] = np.flatnonzero(self.in_store), 0.0
        return near, best
