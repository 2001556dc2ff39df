"""Approximate neighbours from an inverted-file index, opt-in, seeded, with measured recall.

The reference rows are split into ``lists`` cells around seeded centres
(rows drawn at random, moved by a few k-means steps on a sample); a query
compares itself only with the rows of the ``probes`` cells whose centres are
nearest to it. That is the inverted-file scheme (Sivic and Zisserman 2003;
Jegou, Douze and Schmid 2011, with exact rather than compressed rows).

How many cells to probe is not guessed: a seeded sample of the queries is
answered exactly (the fast exact engine); the rank of each exact neighbour's
cell among its query's nearest centres gives the fewest probes that reach the
target recall (the share of each sampled query's exact ``k`` nearest that the
index returns), 0.99 unless ``[run] recall_target`` says otherwise. The sample
is searched to confirm it (25% more probes while float32 rounding leaves it
short). Every query is then answered with that many probes, and the recall
is measured once more on the sampled queries' answers from that full search,
so the recall written to summary.json is the recall of the answers the stage
used, on that sample.

Everything is deterministic: the centres come from a fixed seed, the cells
are computed in float64 with one BLAS thread per block, and each query's scan
is independent of the others, so the number of threads does not change any
answer. Returned distances are exact (:mod:`curate.neighbours._exact`) and each
row's neighbours are ordered by (distance, position); only the choice of
neighbours is approximate.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from threadpoolctl import threadpool_limits

from curate.neighbours._exact import exact_pairs
from curate.neighbours._plan import Plan, Request, run_tasks
from curate.neighbours.jit import compiled

__all__ = ["INDEX_SEED", "RECALL_TARGET", "Recall", "approximate_kneighbors", "measure_recall"]

INDEX_SEED = 0  # centres and recall sample: fixed so that runs repeat
RECALL_TARGET = 0.99
RECALL_SAMPLE = 500
# cells = 2 * sqrt(reference rows): 2,000 cells of 500 rows at a million. Measured at
# 200,000 rows x 20 columns, k = 3, recall 0.99: 6.9 s with 2 per root, 10.3 s with 4,
# 10.8 s with 1 (choosing centres and scanning cells balance near 2).
LISTS_PER_ROOT = 2
TRAIN_PER_LIST = 32  # k-means sample: rows per cell
TRAIN_STEPS = 3
SPARE = 2  # candidates beyond k, ranked exactly: float32 values can swap close rows


@dataclass(frozen=True)
class Recall:
    """Measured recall on a seeded sample of queries, and the probes that gave it."""

    recall: float
    sampled: np.ndarray
    k: int
    probes: int = 0
    lists: int = 0


@dataclass(frozen=True)
class _Index:
    """Reference rows packed cell by cell, with the cells' centres.

    ``packed`` holds each row centred, in float32, as ``[b, |b|^2]``: a query
    written as ``[-2a, 1]`` gets ``|b|^2 - 2 a.b`` from one product, which ranks
    rows as the squared distance does (``|a|^2`` is the same along a query).
    """

    centres: np.ndarray  # (lists, dims), float64
    offsets: np.ndarray  # cell c holds packed rows offsets[c]:offsets[c + 1]
    packed: np.ndarray  # (n_ref, dims + 1), float32
    members: np.ndarray  # reference index of each packed row
    mean: np.ndarray

    @property
    def lists(self) -> int:
        """Number of cells."""
        return int(len(self.centres))


def _nearest_centres(rows: np.ndarray, centres: np.ndarray, count: int, plan: Plan
                     ) -> np.ndarray:
    """Indices of the ``count`` nearest centres of each row (float64; in no set order)."""
    c2 = np.einsum("ij,ij->i", centres, centres)
    # blocks small enough to stay in cache, and within the memory limit (three float64
    # temporaries of one block of rows x centres per thread)
    step = max(1, min(len(rows), 4096,
                      plan.memory_mb * 2**20 // (24 * max(1, len(centres)) * plan.threads)))
    out = np.empty((len(rows), count), dtype=np.int64)

    def task(s: int) -> None:
        block = rows[s:s + step]
        # |c|^2 - 2 r.c ranks centres as the squared distance does (|r|^2 is the same)
        d = block @ centres.T
        d *= -2.0
        d += c2
        if count == 1:
            out[s:s + step, 0] = d.argmin(axis=1)
        elif count < d.shape[1]:
            out[s:s + step] = np.argpartition(d, count - 1, axis=1)[:, :count]
        else:
            out[s:s + step] = np.arange(d.shape[1])

    with threadpool_limits(limits=1, user_api="blas"):
        run_tasks(plan.threads, range(0, len(rows), step), task)
    return out


@compiled(nogil=True)
def _group(cells, probes, lists):  # pragma: no cover - compiled
    """Queries grouped by cell (a counting sort): ``who[starts[c]:starts[c + 1]]`` probe c."""
    starts = np.zeros(lists + 1, dtype=np.int64)
    for e in range(len(cells)):
        starts[cells[e] + 1] += 1
    for c in range(lists):
        starts[c + 1] += starts[c]
    fill = starts[:-1].copy()
    who = np.empty(len(cells), dtype=np.int64)
    for e in range(len(cells)):
        c = cells[e]
        who[fill[c]] = e // probes
        fill[c] += 1
    return who, starts


def _build(req: Request, plan: Plan) -> _Index:
    """Centres, cells and the packed rows; the rows are read a piece at a time."""
    n, dims = len(req.reference), req.dims
    piece = max(1, plan.memory_mb * 2**20 // 8 // (8 * max(1, dims)))
    lists = int(max(1, min(n, round(LISTS_PER_ROOT * np.sqrt(n)))))
    rng = np.random.default_rng(INDEX_SEED)
    centres = req.matrix[req.reference[np.sort(rng.choice(n, size=lists, replace=False))]]
    train = req.reference[np.sort(rng.choice(n, size=min(n, TRAIN_PER_LIST * lists),
                                             replace=False))]
    for _ in range(TRAIN_STEPS):  # Lloyd's steps; a centre with no rows stays where it is
        counts = np.zeros(lists)
        sums = np.zeros((lists, dims))
        for lo in range(0, len(train), piece):
            block = req.matrix[train[lo:lo + piece]]
            cell = _nearest_centres(block, centres, 1, plan)[:, 0]
            counts += np.bincount(cell, minlength=lists)
            for c in range(dims):
                sums[:, c] += np.bincount(cell, weights=block[:, c], minlength=lists)
        filled = counts > 0
        centres[filled] = sums[filled] / counts[filled, None]
    cell = np.empty(n, dtype=np.int64)
    total = np.zeros(dims)
    for lo in range(0, n, piece):
        block = req.matrix[req.reference[lo:lo + piece]]
        cell[lo:lo + piece] = _nearest_centres(block, centres, 1, plan)[:, 0]
        total += block.sum(axis=0)
    mean = total / max(1, n)
    members = np.argsort(cell, kind="stable")  # cell by cell, positions ascending inside
    offsets = np.concatenate([[0], np.cumsum(np.bincount(cell, minlength=lists))])
    del cell
    packed = np.empty((n, dims + 1), dtype=np.float32)
    for lo in range(0, n, piece):
        rows = (req.matrix[req.reference[members[lo:lo + piece]]] - mean).astype(np.float32)
        packed[lo:lo + piece, :-1] = rows
        wide = rows.astype(np.float64)
        packed[lo:lo + piece, -1] = np.einsum("ij,ij->i", wide, wide)
    return _Index(centres, offsets.astype(np.int64), packed, members.astype(np.int64), mean)


@compiled(nogil=True)
def _update(values, who, members, own, best_v, best_i):  # pragma: no cover - compiled
    """Fold one cell's values into the candidate lists of the queries ``who``.

    ``values[r, j]`` ranks member ``j`` for query ``who[r]``; lists are kept
    ordered by (value, reference index).
    """
    width = best_v.shape[1]
    for r in range(values.shape[0]):
        qi = who[r]
        for j in range(values.shape[1]):
            v = values[r, j]
            last = best_v[qi, width - 1]
            if v > last:
                continue
            idx = members[j]
            if idx == own[qi] or (v == last and idx >= best_i[qi, width - 1]):
                continue
            at = width - 1
            while at > 0 and (best_v[qi, at - 1] > v or
                              (best_v[qi, at - 1] == v and best_i[qi, at - 1] > idx)):
                best_v[qi, at] = best_v[qi, at - 1]
                best_i[qi, at] = best_i[qi, at - 1]
                at -= 1
            best_v[qi, at] = v
            best_i[qi, at] = idx


def _split(work: np.ndarray, parts: int) -> list[int]:
    """Cell boundaries that cut the cells into ``parts`` runs of about equal work."""
    total = np.cumsum(work)
    if parts <= 1 or len(work) == 0 or total[-1] == 0:
        return [0, len(work)]
    cuts = np.searchsorted(total, total[-1] * np.arange(1, parts) / parts)
    return sorted({0, *[int(c) for c in cuts], len(work)})


def _candidates(req: Request, index: _Index, rows: np.ndarray, probes: int, width: int,
                plan: Plan) -> np.ndarray:
    """Reference indices of each query's ``width`` best rows in its probed cells (-1: none).

    Queries are grouped by cell, so each cell's rows meet all their queries in one
    matrix product. Each thread takes a run of cells with its own candidate lists;
    the lists are merged by (value, index), so the answer does not depend on the
    threads.
    """
    q = (req.matrix[req.queries[rows]] - index.mean).astype(np.float32)
    qa = np.empty((len(rows), req.dims + 1), dtype=np.float32)
    qa[:, :-1] = -2 * q
    qa[:, -1] = 1
    near = _nearest_centres(req.matrix[req.queries[rows]], index.centres, probes, plan)
    who_all, starts = _group(near.reshape(-1), probes, index.lists)
    sizes = np.diff(index.offsets)
    bounds = _split(np.diff(starts) * sizes, plan.threads)
    own = req.self_index[rows]
    tile_bytes = max(2**16, plan.memory_mb * 2**20 // (8 * plan.threads))

    def task(part: int) -> tuple[np.ndarray, np.ndarray]:
        best_v = np.full((len(rows), width), np.inf, dtype=np.float32)
        best_i = np.full((len(rows), width), -1, dtype=np.int64)
        for c in range(bounds[part], bounds[part + 1]):
            a, b = index.offsets[c], index.offsets[c + 1]
            if a == b or starts[c] == starts[c + 1]:
                continue
            step = max(1, tile_bytes // (4 * (b - a)))  # queries per product: one tile
            for lo in range(starts[c], starts[c + 1], step):
                who = who_all[lo:min(starts[c + 1], lo + step)]
                values = qa[who] @ index.packed[a:b].T
                _update(values, who, index.members[a:b], own, best_v, best_i)
        return best_v, best_i

    with threadpool_limits(limits=1, user_api="blas"):
        found = run_tasks(plan.threads, range(len(bounds) - 1), task)
    if len(found) == 1:
        return found[0][1]
    v = np.concatenate([f[0] for f in found], axis=1)
    i = np.concatenate([f[1] for f in found], axis=1)
    order = np.lexsort((np.where(i < 0, np.iinfo(np.int64).max, i), v), axis=1)[:, :width]
    return np.take_along_axis(i, order, axis=1)


def _search(req: Request, index: _Index, k: int, probes: int, plan: Plan
            ) -> tuple[np.ndarray, np.ndarray]:
    """k nearest among the probed cells: exact distances, ordered by (distance, position)."""
    probes = min(probes, index.lists)
    width = k + SPARE
    out_d = np.empty((len(req.queries), k))
    out_i = np.empty((len(req.queries), k), dtype=np.int64)
    # per query in flight: its rows (float64, float32 and augmented), its probes (int64,
    # twice: cells and the grouping), each thread's lists and the exact ranking's arrays
    per_query = 16 * req.dims + 4 + 16 * probes + (plan.threads + 3) * width * 12
    step = max(64, plan.memory_mb * 2**20 // 4 // per_query)
    for s in range(0, len(req.queries), step):
        rows = np.arange(s, min(len(req.queries), s + step))
        found = _candidates(req, index, rows, probes, width, plan)
        valid = found >= 0
        short = np.flatnonzero(valid.sum(axis=1) < k)
        if len(short) and probes < index.lists:  # too few rows in the probed cells
            found[short] = _candidates(req, index, rows[short], index.lists, width, plan)
            valid = found >= 0
        cols = np.where(valid, found, 0)
        dist = exact_pairs(req.matrix, np.repeat(req.queries[rows], width),
                           req.reference[cols.reshape(-1)], req.metric).reshape(-1, width)
        dist[~valid] = np.inf
        rank = np.lexsort((np.where(valid, found, np.iinfo(np.int64).max), dist),
                          axis=1)[:, :k]
        out_d[rows] = np.take_along_axis(dist, rank, axis=1)
        out_i[rows] = req.reference[np.take_along_axis(cols, rank, axis=1)]
    return out_d, out_i


def measure_recall(approx_pos: np.ndarray, exact_pos: np.ndarray, sampled: np.ndarray,
                   k: int) -> Recall:
    """Share of each sampled query's exact k nearest that the approximate search returned.

    Examples
    --------
    >>> measure_recall(np.array([[1, 2], [0, 3]]), np.array([[1, 2], [0, 2]]),
    ...                np.array([0, 1]), 2).recall
    0.75
    """
    hits = sum(len(np.intersect1d(a, e)) for a, e in zip(approx_pos, exact_pos, strict=True))
    return Recall(float(hits / max(1, len(sampled) * k)), sampled, k)


def sample_queries(n_queries: int, sample: int, seed: int) -> np.ndarray:
    """Indices of the seeded sample of queries whose recall is measured (ascending)."""
    rng = np.random.default_rng(seed)
    return np.sort(rng.choice(n_queries, size=min(sample, n_queries), replace=False))


def approximate_kneighbors(req: Request, k: int, plan: Plan, target: float = RECALL_TARGET,
                           sample: int = RECALL_SAMPLE, seed: int = INDEX_SEED,
                           sample_only: bool = False) -> tuple[np.ndarray, np.ndarray, Recall]:
    """Approximate k nearest reference rows (Euclidean) and the recall measured on a sample.

    ``sample_only`` answers the sampled queries only (their rows in the order of
    ``Recall.sampled``): what a full query would measure, up to float32 rounding
    in the products, without running it.

    Examples
    --------
    >>> from curate.neighbours._plan import make_request, plan_for
    >>> req = make_request(np.array([[0.0], [1.0], [3.0], [4.0]]), "euclidean", None, None, True)
    >>> d, i, r = approximate_kneighbors(req, 2, plan_for(64, 4, 4, 1, 2))
    >>> i.tolist(), r.recall
    ([[1, 2], [0, 2], [3, 1], [2, 1]], 1.0)
    """
    from curate.neighbours._fast import fast_kneighbors

    index = _build(req, plan)
    pick = sample_queries(len(req.queries), sample, seed)
    sub = req.rows(pick)
    exact = fast_kneighbors(sub, k, plan)[1]
    probes = _probes_for(sub, exact, index, target, plan)
    while True:
        dist, pos = _search(sub, index, k, probes, plan)
        measured = measure_recall(pos, exact, sub.queries, k)
        if measured.recall >= target or probes >= index.lists:
            break
        probes = min(index.lists, max(probes + 1, probes * 5 // 4))
    if not sample_only:
        dist, pos = _search(req, index, k, probes, plan)
        measured = measure_recall(pos[pick], exact, sub.queries, k)
    return dist, pos, Recall(measured.recall, sub.queries, k, probes, index.lists)


def _probes_for(sub: Request, exact: np.ndarray, index: _Index, target: float,
                plan: Plan) -> int:
    """The fewest cells whose probing would reach ``target`` on the sample.

    A sampled query finds an exact neighbour when that neighbour's cell is among
    the query's nearest ``p`` centres; the rank of each neighbour's cell gives
    the recall for every ``p`` at once. (The search itself can still miss a
    row by float32 rounding, which the caller's check catches.)
    """
    cell_of = np.empty(len(index.members), dtype=np.int64)
    cell_of[index.members] = np.repeat(np.arange(index.lists), np.diff(index.offsets))
    cells = cell_of[np.searchsorted(sub.reference, exact)]
    c2 = np.einsum("ij,ij->i", index.centres, index.centres)
    order = np.arange(index.lists)
    needed = np.empty(cells.shape, dtype=np.int64)
    # a piece of the sample at a time: distances to every centre, and a comparison
    step = max(1, plan.memory_mb * 2**20 // 4 // (16 * index.lists))
    for lo in range(0, len(cells), step):
        d = c2 - 2.0 * (sub.matrix[sub.queries[lo:lo + step]] @ index.centres.T)
        for j in range(cells.shape[1]):
            mine = cells[lo:lo + step, j]
            own = np.take_along_axis(d, mine[:, None], axis=1)
            # the cell's rank among the query's centres, ties to the lower index
            needed[lo:lo + step, j] = (d < own).sum(axis=1) + \
                ((d == own) & (order < mine[:, None])).sum(axis=1)
    needed = np.sort(needed.reshape(-1))
    at = min(len(needed) - 1, max(0, int(np.ceil(target * len(needed))) - 1))
    return int(min(index.lists, needed[at] + 1)) if len(needed) else 1
