"""Condensing (CNN, FCNN, RNN) in an update: keep the kept set consistent on old and new rows.

A condensed set is consistent (Hart 1968) when 1-NN over the kept rows
labels every row of the stage correctly. The run left such a set and, in the
audit, each removed row's nearest kept row (``kept_as``) and its distance.
The update keeps that set and its rows, and:

* rows that enter the stage (new rows, rows an earlier stage restored) and
  removed rows whose kept row left the stage look up their nearest kept row;
* while some of them are labelled wrongly, each kept row takes in the nearest
  row of its cell (the rows it is nearest to) that it labels wrongly, as in
  Angiulli's FCNN, and the others look again at the rows just added;
* removed old rows to which a row just added is nearer than their kept row
  switch to it; if it carries another label, the new row made them
  inconsistent and they are handled the same way (they are kept).

At the end every row's nearest kept row carries its label, so the set is
consistent again (up to copies with conflicting labels, as in a full run).
Old rows never leave the kept set, so the result can keep more rows than a
full run would, and can differ from it; the summary says so.
"""

from __future__ import annotations

import numpy as np

from curate.methods.base import SelectionBuilder, encode
from curate.methods.condensing import _absorbed
from curate.neighbours.search import kneighbors
from curate.neighbours.within import within
from curate.pipeline.stage import removable_rows
from curate.pipeline.update_records import StageInput, StageUpdate, among, full_rerun
from curate.space.points import Space

__all__ = ["condense_update"]


class _Nearest:
    """Each row's nearest kept row (``near``, -1 when unknown) and its distance ``best``."""

    def __init__(self, space: Space, n: int) -> None:
        self.space = space
        self.near = np.full(n, -1, dtype=np.int64)
        self.best = np.full(n, np.inf)

    def look_up(self, rows: np.ndarray, in_store: np.ndarray, inp: StageInput) -> None:
        """Set each row's nearest member (none of ``rows`` is one): from an earlier stage's
        lists where a listed row is a member, by a search among the members otherwise."""
        rows = self._from_lists(rows, in_store, inp)
        members = np.flatnonzero(in_store)
        if len(rows):
            d, p = kneighbors(self.space, 1, queries=rows, reference=members, exclude_self=False)
            self.near[rows], self.best[rows] = p[:, 0], d[:, 0]

    def _from_lists(self, rows: np.ndarray, in_store: np.ndarray, inp: StageInput) -> np.ndarray:
        """Answer the rows an earlier stage's list answers; return the rows left."""
        lists = inp.earlier
        if lists is None or len(rows) == 0:
            return rows
        at = np.searchsorted(lists.rows, inp.rows[rows])
        listed = lists.nbr[at]
        member = np.zeros(int(max(lists.rows.max(), inp.rows.max())) + 1, dtype=bool)
        member[inp.rows[in_store]] = True
        hit = member[listed]
        found = hit.any(axis=1)
        first = hit[found].argmax(axis=1)
        done = rows[found]
        self.near[done] = np.searchsorted(inp.rows, listed[found, first])
        self.best[done] = lists.dist[at[found], first]
        return rows[~found]

    def improve(self, rows: np.ndarray, added: np.ndarray) -> np.ndarray:
        """Switch ``rows`` to a row of ``added`` that is nearer (or as near, at a lower
        position) than their kept row; return the rows that switched."""
        if len(rows) == 0 or len(added) == 0:
            return np.zeros(0, dtype=np.int64)
        q, p, d = within(self.space, self.best[rows], queries=rows, reference=added)
        first = np.ones(len(q), dtype=bool)
        first[1:] = q[1:] != q[:-1]
        r, p, d = rows[q[first]], p[first], d[first]
        better = (d < self.best[r]) | ((d == self.best[r]) & (p < self.near[r]))
        r = r[better]
        self.near[r], self.best[r] = p[better], d[better]
        return r


def _nearest_wrong(wrong: np.ndarray, near: np.ndarray, best: np.ndarray) -> np.ndarray:
    """Per kept row, the nearest of the wrongly labelled rows it is nearest to."""
    order = np.lexsort((wrong, best[wrong], near[wrong]))
    ranked = wrong[order]
    owner = near[ranked]
    first = np.ones(len(ranked), dtype=bool)
    first[1:] = owner[1:] != owner[:-1]
    return ranked[first]


def _settle(nearest: _Nearest, codes: np.ndarray, in_store: np.ndarray,
            watch: np.ndarray) -> tuple[np.ndarray, int]:
    """Add rows until every watched row is labelled correctly; return the rows added, rounds."""
    added: list[np.ndarray] = []
    rounds = 0
    while len(watch):
        wrong = watch[codes[nearest.near[watch]] != codes[watch]]
        if len(wrong) == 0:
            break
        rounds += 1
        joining = _nearest_wrong(wrong, nearest.near, nearest.best)
        in_store[joining] = True
        added.append(joining)
        watch = watch[~in_store[watch]]
        nearest.improve(watch, joining)
    return (np.concatenate(added) if added else np.zeros(0, dtype=np.int64)), rounds


def _old_nearest(inp: StageInput, nearest: _Nearest, in_store: np.ndarray) -> None:
    """The nearest kept row of each old removed row, from the audit, where it is still kept."""
    rec = inp.old.records
    pos = rec["position"].to_numpy()
    kept_at = rec["kept_position"].fill_null(-1).to_numpy()
    dist = rec["neighbour_distances"].list.first().fill_null(np.inf).to_numpy()
    here = among(pos, inp.rows) & among(kept_at, inp.rows)
    local = np.searchsorted(inp.rows, pos[here])
    keeper = np.searchsorted(inp.rows, kept_at[here])
    ok = in_store[keeper] & ~in_store[local]
    nearest.near[local[ok]], nearest.best[local[ok]] = keeper[ok], dist[here][ok]


def condense_update(inp: StageInput) -> StageUpdate:
    """Bring a condensing stage up to date, keeping its kept rows consistent (module notes)."""
    if len(inp.old.protected) or len(inp.protected):
        return full_rerun(inp, "protected rows: the stage's record of what it would remove "
                               "without protection needs a full run")
    if inp.prep.space.engine.cluster_address is not None:
        return full_rerun(inp, "on a cluster, condensing runs in partitions")
    sub = inp.prep.space.subset(inp.active)
    names, codes = encode(inp.labels)
    n = len(inp.active)
    in_store = inp.was_there & ~inp.was_removed
    if not in_store.any():
        return full_rerun(inp, "none of the rows it kept reach it any more")
    in_store |= ~removable_rows(inp.stage, inp.labels, inp.protected, inp.prep.task.task)
    nearest = _Nearest(sub, n)
    _old_nearest(inp, nearest, in_store)
    before = (nearest.near.copy(), nearest.best.copy())
    pending = np.flatnonzero(~in_store & (nearest.near < 0))
    nearest.look_up(pending, in_store, inp)
    watch, batch, rounds = pending, np.flatnonzero(in_store & ~inp.was_there), 0
    switched_total = np.zeros(n, dtype=bool)
    while True:
        added, more = _settle(nearest, codes, in_store, watch)
        rounds += more
        batch = np.union1d(batch, added)
        looked = np.zeros(n, dtype=bool)
        looked[watch] = True
        others = np.flatnonzero(~in_store & ~looked)
        switched = nearest.improve(others, batch)
        switched_total[switched] = True
        batch = np.zeros(0, dtype=np.int64)
        watch = switched[codes[nearest.near[switched]] != codes[switched]]
        if len(watch) == 0:
            break
    return _result(inp, nearest, before, in_store, pending, switched_total, rounds, names, codes)


def _result(inp: StageInput, nearest: _Nearest, before: tuple[np.ndarray, np.ndarray],
            in_store: np.ndarray, pending: np.ndarray, switched: np.ndarray, rounds: int,
            names: np.ndarray, codes: np.ndarray) -> StageUpdate:
    n = len(inp.active)
    fresh = ~in_store & ((nearest.near != before[0]) | (nearest.best != before[1]))
    steps = int(max([v for k, v in inp.old.info.items() if k in ("steps", "passes")],
                    default=0)) + rounds
    out = SelectionBuilder(n)
    _absorbed(out, np.flatnonzero(fresh), nearest.near, nearest.best, names, codes, steps)
    sel = out.selection(info={"steps": steps, "update_rounds": rounds})
    copied = inp.rows[~in_store & ~fresh]
    kept = np.flatnonzero(in_store)
    old_row = inp.was_there
    orphans = int(old_row[pending].sum())
    why = {"its kept row left the stage": orphans,
           "a row added to the kept rows is nearer": int((switched & old_row).sum())}
    report = {"mode": "incremental", "rows_entering": int((~old_row).sum()),
              "old_rows_rejudged": int(sum(why.values())), "rejudged_because": why,
              "new_rows_kept": int((in_store & ~old_row).sum()),
              "old_rows_restored": int((in_store & inp.was_removed).sum()),
              "old_rows_removed_now": 0,
              "note": "the kept rows stay consistent (Hart 1968) on every row of the stage, old "
                      "and new; old kept rows stay, so a full run may keep other rows"}
    return StageUpdate(kept, sel, copied, report, exact=False)
