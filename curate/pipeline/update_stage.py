"""One stage of an update: the old run's stage, brought up to date with the rows that
entered and left it.

Per family (see :func:`update_stage`):

* editing whose result is a function of every row's k nearest neighbours
  (ENN, All-kNN, Tomek links, NCR, hardness): the lists are brought up to date
  (:mod:`curate.neighbours.refresh`: only entering rows, rows whose list an entering
  row enters and rows that lost a neighbour are searched), then the method
  itself runs on them, so every vote, restore and audit record is the full
  run's;
* exact and conflicting copies: only the groups of equal rows that gained or
  lost a row are judged again, by the method itself; the other groups keep
  their records (conflicting targets of a regression table run in full: their
  tolerance and the audit's decimals follow the spread of every target);
* near copies: new rows at the end of the input are judged by the leader
  scheme against the kept leaders, as a full run would judge them;
* condensing: :mod:`curate.pipeline.update_condense`;
* anything else, and every case where the old decisions could move in ways
  the shortcuts above do not follow (RENN's rounds, DROP3 and ICF, protected
  rows, a class restriction whose smallest class changed): the stage runs
  again in full on its new rows, and the summary says why.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from curate.methods import method_for
from curate.methods.base import Selection, SelectionBuilder, encode
from curate.methods.duplicates import _leaders
from curate.neighbours.lists import sharing_lists
from curate.neighbours.refresh import refresh_lists
from curate.neighbours.search import radius_neighbors
from curate.pipeline.stage import removable_rows, run_stage
from curate.pipeline.update_condense import condense_update
from curate.pipeline.update_records import StageInput, StageUpdate, among, full_rerun, old_fate
from curate.space.points import Space

__all__ = ["update_stage"]

COPY_METHODS = ("exact-duplicates", "conflicting-duplicates")
CONDENSING = ("cnn", "fcnn", "rnn")


def _listed(inp: StageInput) -> StageUpdate:
    if inp.old.lists is None:
        return full_rerun(inp, "the run kept no neighbour lists for this stage")
    sub = inp.prep.space.subset(inp.active)
    if sub.metric != inp.old.metric:
        return full_rerun(inp, f"distances are now measured as {sub.metric!r}, not "
                               f"{inp.old.metric!r} (new rows with missing values)")
    dist, nbr, changes = refresh_lists(sub, inp.rows, inp.old.rows, *inp.old.lists)
    with sharing_lists(sub.matrix, dist, nbr):
        sel = run_stage(inp.stage, sub, inp.labels, inp.protected, inp.seed, inp.prep.task.task)
    why = {"a new or restored row entered its neighbour list": int(len(changes.merged)),
           "a listed neighbour left the stage": int(len(changes.lost))}
    moved = _decisions_moved(inp, sel, changes.changed)
    if moved:
        why["a neighbour's decision changed"] = moved
    report = {"mode": "incremental", "rows_entering": int(len(changes.entering)),
              "old_rows_rejudged": int(sum(why.values())), "rejudged_because": why,
              **old_fate(inp, sel.kept)}
    return StageUpdate(sel.kept, sel, np.zeros(0, dtype=np.int64), report, (dist, nbr),
                       scores=sel.scores)


def _decisions_moved(inp: StageInput, sel: Selection, changed: np.ndarray) -> int:
    """Old rows whose list did not change but whose decision did (Tomek partners, NCR)."""
    removed_now = np.zeros(len(inp.rows), dtype=bool)
    removed_now[sel.removed] = True
    moved = (removed_now != inp.was_removed) & inp.was_there
    moved[changed] = False
    return int(moved.sum())


def _removable_moved(inp: StageInput) -> bool:
    """Whether any old row's right to be removed differs now (class restriction, protection)."""
    if len(inp.old.protected) or len(inp.protected):
        return True
    task = inp.prep.task.task
    now = removable_rows(inp.stage, inp.labels, inp.protected, task)
    old_labels = inp.prep.space_labels[np.searchsorted(inp.prep.valid_positions, inp.old.rows)]
    before = removable_rows(inp.stage, old_labels, np.zeros(0, dtype=np.int64), task)
    both = among(inp.old.rows, inp.rows)
    return bool(np.any(before[both] != now[np.searchsorted(inp.rows, inp.old.rows[both])]))


def _group_keys(space: Space, labels: np.ndarray, with_label: bool) -> np.ndarray:
    ident = space.identity_codes()
    if not with_label:
        return ident
    _, codes = encode(labels)
    return ident * (int(codes.max(initial=0)) + 1) + codes


def _copies(inp: StageInput) -> StageUpdate:
    if _removable_moved(inp):
        return full_rerun(inp, "protected rows or a class restriction whose rows changed")
    prep = inp.prep
    every = np.sort(np.concatenate([inp.active, np.searchsorted(prep.valid_positions,
                                                                inp.leaving())]))
    space = prep.space.subset(every)
    keys = _group_keys(space, prep.space_labels[every], inp.stage.method == "exact-duplicates")
    moved = among(every, inp.active[inp.entering()]) | ~among(every, inp.active)
    touched = among(keys, np.unique(keys[moved]))
    affected = np.flatnonzero(among(inp.active, every[touched]))
    removable = removable_rows(inp.stage, inp.labels, inp.protected, prep.task.task)
    sub = prep.space.subset(inp.active[affected])
    info = method_for(inp.stage.method, prep.task.task)
    part = info.func(sub, inp.labels[affected], removable=removable[affected], seed=inp.seed,
                     **dict(inp.stage.params))
    sel = _lift(part, affected, len(inp.active))
    copied = inp.old.removed[among(inp.old.removed, inp.rows)]
    copied = copied[~among(copied, inp.rows[affected])]
    kept = _kept(len(inp.active), sel.removed, np.searchsorted(inp.rows, copied))
    old_groups = int(inp.was_there[affected].sum())
    report = {"mode": "incremental", "rows_entering": int(len(inp.entering())),
              "old_rows_rejudged": old_groups,
              "rejudged_because": {"a row of its group of equal rows entered or left": old_groups},
              **old_fate(inp, kept)}
    sel.info = {**part.info, "note": "counts over the groups of equal rows the update touched"}
    return StageUpdate(kept, sel, copied, report)


def _kept(n: int, *removed: np.ndarray) -> np.ndarray:
    """The positions of ``range(n)`` in none of the ``removed`` arrays."""
    keep = np.ones(n, dtype=bool)
    for gone in removed:
        keep[gone] = False
    return np.flatnonzero(keep)


def _lift(part: Selection, where: np.ndarray, n: int) -> Selection:
    """A selection over the rows ``where`` of a stage, in the stage's positions."""
    kept_as = np.where(part.kept_as >= 0, where[np.maximum(part.kept_as, 0)], -1)
    return replace(part, kept=_kept(n, where[part.removed]),
                   removed=where[part.removed], neighbours=[where[p] for p in part.neighbours],
                   kept_as=kept_as, groups=[where[g] for g in part.groups])


def _near(inp: StageInput) -> StageUpdate:
    entering = inp.entering()
    appended = len(inp.old.rows) == 0 or np.all(inp.rows[entering] > inp.old.rows.max())
    if len(inp.leaving()) or not appended or _removable_moved(inp):
        return full_rerun(inp, "rows left the stage, re-entered it among older rows, or may "
                               "now be removed differently")
    params = dict(inp.stage.params)
    sub = inp.prep.space.subset(inp.active)
    _, codes = encode(inp.labels)
    dist, nbr = radius_neighbors(sub, float(params["radius"]), queries=entering)
    removable = removable_rows(inp.stage, inp.labels, inp.protected, inp.prep.task.task)
    clash = [bool(np.any(codes[p] != codes[i])) for i, p in zip(entering, nbr, strict=True)]
    first = int(entering.min()) if len(entering) else len(inp.active)
    # a row that may not be removed leads from the start: it could take older rows' copies
    fixed = [not removable[i] and bool(np.any((codes[p] == codes[i]) & (p < first)))
             for i, p in zip(entering, nbr, strict=True)]
    if (params.get("conflicts") == "drop" and any(clash)) or any(fixed):
        return full_rerun(inp, "a new row conflicts with rows within the radius (conflicts = "
                               "\"drop\"), or may not be removed and has copies")
    n = len(inp.active)
    lists: list[np.ndarray] = [np.zeros(0, dtype=np.int64)] * n
    dists: list[np.ndarray] = [np.zeros(0)] * n
    for i, p, d in zip(entering, nbr, dist, strict=True):
        lists[i], dists[i] = p, d
    alive = ~inp.was_removed
    only_new = np.zeros(n, dtype=bool)
    only_new[entering] = removable[entering]
    out = SelectionBuilder(n)
    _leaders(codes, lists, dists, only_new, alive, out)
    sel = out.selection(info={"radius": float(params["radius"]),
                              "near_copies_removed_among_new_rows": len(out),
                              "new_rows_conflicting": int(sum(clash))})
    copied = inp.old.removed[among(inp.old.removed, inp.rows)]
    kept = _kept(n, sel.removed, np.searchsorted(inp.rows, copied))
    report = {"mode": "incremental", "rows_entering": int(len(entering)), "old_rows_rejudged": 0,
              "rejudged_because": {}, **old_fate(inp, kept)}
    return StageUpdate(kept, sel, copied, report)


def update_stage(inp: StageInput) -> StageUpdate:
    """Bring one stage up to date (see the module notes for what each family does)."""
    method = inp.stage.method
    if not len(inp.old.rows):
        return full_rerun(inp, "the stage had no rows in the run")
    if method_for(method, inp.prep.task.task).judged_by_lists:
        return _listed(inp)
    if method == "conflicting-duplicates" and inp.prep.task.task == "regression":
        return full_rerun(inp, "conflicting targets are judged against the spread of all the "
                               "stage's targets, which every new row moves: it reruns in full "
                               "(same result as a full run)")
    if method in COPY_METHODS:
        return _copies(inp)
    if method == "near-duplicates":
        return _near(inp)
    if method in CONDENSING:
        return condense_update(inp)
    return full_rerun(inp, f"{method} has no incremental form: it reruns in full on the "
                           "stage's rows (same result as a full run)")
