"""The command line's text: what `curate` prints when it is not asked for JSON.

Every function takes plain data (a summary, an evaluation, a distance profile,
a diff, the method table) and returns the text; the commands print it.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np

from curate.errors import counted
from curate.io.diff import RunDiff
from curate.methods.base import MethodInfo
from curate.report.html import over_limit_notes
from curate.settings import Param

__all__ = ["diff_text", "distances_text", "evaluation_text", "methods_table", "methods_text",
           "ranking_text", "review_text", "summary_text"]


def summary_text(summary: dict[str, Any], out: Path, seconds: float | None = None) -> str:
    """A run's summary in a few lines: the task, rows in, kept, removed, each stage, the times.

    ``seconds`` is the whole command's time, when the caller measured it.
    """
    task = summary.get("task", {})
    lines = [f"task: {task.get('task', 'classification')} ({task.get('reason', 'the default')})",
             f"{counted(summary['rows_in'], 'row')} in, {summary['rows_kept']} kept, "
             f"{summary['rows_removed']} removed ({summary['rows_quarantined']} quarantined)"]
    for st in summary["stages"]:
        reasons = ", ".join(f"{k} {v}" for k, v in st["by_reason"].items()) or "nothing"
        lines.append(f"  {st['name']} ({st['method']}): {st['rows_in']} in, removed {reasons}, "
                     f"{st['seconds']:.2f} s")
    whole = f"; whole command {seconds:.2f} s" if seconds is not None else ""
    lines.append(f"stages {summary['seconds']:.2f} s{whole}")
    lines.append(f"run folder: {out}")
    return "\n".join(lines)


def update_text(facts: Mapping[str, Any]) -> str:
    """How an update went: new rows, the fitted ranges, and per stage its mode and why.

    Examples
    --------
    >>> print(update_text({"new_rows": 5, "old_rows": 95, "refit": False,
    ...     "rows_outside_fitted_ranges": 1, "equals_full_run": True, "stages": [
    ...     {"name": "m", "method": "enn", "mode": "incremental", "old_rows_rejudged": 4,
    ...      "rejudged_because": {"a new row entered its list": 4},
    ...      "equals_full_run": True}]}))
    update: 5 new rows added to 95; 1 new rows lie outside the run's fitted ranges
      m (enn): incremental, 4 old rows judged again (a new row entered its list 4); equals a full run
    the result equals a full run on old and new rows
    """
    head = f"update: {facts['new_rows']} new rows added to {facts['old_rows']}"
    if facts.get("refit"):
        head += "; space refitted (a full run)"
    else:
        head += (f"; {facts['rows_outside_fitted_ranges']} new rows lie outside the run's "
                 "fitted ranges")
    lines = [head]
    for st in facts["stages"]:
        line = f"  {st['name']} ({st['method']}): {st['mode']}"
        if "why" in st:
            line += f" ({st['why']})"
        if "old_rows_rejudged" in st:
            why = ", ".join(f"{k} {v}" for k, v in st.get("rejudged_because", {}).items() if v)
            line += f", {st['old_rows_rejudged']} old rows judged again" + (f" ({why})" if why
                                                                              else "")
        line += "; equals a full run" if st["equals_full_run"] else "; may differ from a full run"
        lines.append(line)
    lines.append("the result equals a full run on old and new rows" if facts["equals_full_run"]
                 else "the result may differ from a full run on old and new rows (see above)")
    return "\n".join(lines)


def _rounded(value: float | None) -> str:
    return "-" if value is None else f"{value:.3g}"


def distances_text(profile: Mapping[str, Any]) -> str:
    """The distance profile of `curate distances` as two tables, numbers to 3 significant digits.

    Examples
    --------
    >>> print(distances_text({"rows": 4, "metric": "euclidean", "rows_alone_in_their_label": 1,
    ...     "nearest_same_label": {"0.5": 0.1234567}, "nearest_other_label": {"0.5": 1.5},
    ...     "candidates": [{"radius": 0.2, "rows_with_same_label_within": 2, "would_remove": 1,
    ...                     "conflicting_rows": 0}]}))
    4 rows, euclidean distance; rows alone in their label: 1
    distance to the nearest row       50%
      with the same label           0.123
      with another label              1.5
    <BLANKLINE>
    candidate radius   rows with a same-label row within   would remove   conflicting rows
                 0.2                                   2              1                  0
    """
    quantiles = list(profile["nearest_same_label"])
    lines = [f"{counted(profile['rows'], 'row')}, {profile.get('distance', profile['metric'])} "
             f"distance; rows alone in their label: {profile['rows_alone_in_their_label']}",
             "distance to the nearest row  " + "".join(f"{float(q):>8.0%}" for q in quantiles)]
    for title, key in (("with the same label", "nearest_same_label"),
                       ("with another label", "nearest_other_label")):
        lines.append(f"  {title:<27}" + "".join(f"{_rounded(profile[key][q]):>8}"
                                                for q in quantiles))
    lines += ["", "candidate radius   rows with a same-label row within   would remove   "
              "conflicting rows"]
    for c in profile["candidates"]:
        lines.append(f"{_rounded(c['radius']):>16}   {c['rows_with_same_label_within']:>33}   "
                     f"{c['would_remove']:>12}   {c['conflicting_rows']:>16}")
    return "\n".join(lines)


def methods_table(methods: Mapping[str, MethodInfo],
                  task: str = "classification") -> list[dict[str, Any]]:
    """Every method with its parameters, as JSON-ready data (`curate methods --json`)."""
    return [{"key": m.key, "task": task, "name": m.name, "family": m.family,
             "reference": m.reference,
             "purpose": m.purpose, "reasons": m.reasons,
             "default_max_removed_share": m.default_limit()[0],
             "default_keep_every_class": m.default_limit()[1], "default_limit": m.limit_text(task),
             "catches": list(m.catches),
             "params": [{"name": p.name, "default": p.default, "allowed": p.allowed(),
                         "doc": p.doc} for p in m.params]} for m in methods.values()]


def methods_text(methods: Mapping[str, MethodInfo], task: str = "classification") -> str:
    """Every method with its parameters, for reading (`curate methods`)."""
    lines: list[str] = []
    for info in methods.values():
        lines.append(f"{info.key:<24} {info.name} ({info.family}; {info.reference})")
        lines.append(f"{'':<24} {info.purpose}")
        lines.append(f"{'':<24} default safety limit: {info.limit_text(task)}")
        if info.catches:
            lines.append(f"{'':<24} meant to catch: {', '.join(info.catches)}")
        for p in info.params:
            lines.append(f"{'':<26}{p.name} = {_default(p)}: {p.doc} ({p.allowed()})")
        lines.append("")
    return "\n".join(lines)


def _default(param: Param) -> str:
    """A parameter's default as a user would write it: "(required)" or "(none)" for no value.

    Examples
    --------
    >>> _default(Param("radius", float, None, "r", required=True)), _default(Param("k", int, 3, ""))
    ('(required)', '3')
    """
    if param.default is None:
        return "(required)" if param.required else "(none)"
    return json.dumps(param.default) if isinstance(param.default, str | bool) else str(param.default)


def review_text(removed: int, flagged: int, run: str, out: str, protect_path: str) -> str:
    """What `curate review` wrote, and what the reviewer does next.

    ``protect_path`` is ``out`` as the pipeline file must name it (relative to its folder).

    Examples
    --------
    >>> review_text(2, 3, "run", "r.csv", "r.csv").splitlines()[0]
    'wrote 2 removed rows and 3 rows a label-noise stage flagged but kept of run to r.csv'
    """
    kept = f" and {counted(flagged, 'row')} a label-noise stage flagged but kept" \
        if flagged else ""
    return (f"wrote {counted(removed, 'removed row')}{kept} of {run} to {out}\n"
            "write keep in the decision column of rows that must stay (empty or remove: no "
            f"objection), then add to [input]: protect_file = {json.dumps(protect_path)}")


def diff_text(diff: RunDiff, limit: int = 20) -> str:
    """The diff as a table for the terminal: one line per row, then each run's detail.

    Only the first ``limit`` changed rows are listed; a last line counts the rest and
    points to ``--out`` (every changed row in a CSV file) and ``--json``.
    """
    if diff.changes.height == 0:
        return f"no row changed fate from {diff.run_a} to {diff.run_b} ({diff.compared} compared)"
    counts = ", ".join(f"{n} {c}" for c, n in diff.counts().items())
    lines = [f"{diff.changes.height} of {counted(diff.compared, 'row')} changed fate from {diff.run_a} (A) "
             f"to {diff.run_b} (B): {counts}"]
    width = max(6, *(len(r) for r in diff.changes["row_id"]))
    lines.append(f"{'row_id':<{width}}  {'change':<21}  {'run A':<34}  run B")
    for r in diff.changes.head(limit).iter_rows(named=True):
        a, b = (r[f"{p}_fate"] if r[f"{p}_fate"] == "kept"
                else f"{r[f'{p}_stage']} / {r[f'{p}_reason']}" for p in ("a", "b"))
        lines.append(f"{r['row_id']:<{width}}  {r['change']:<21}  {a:<34}  {b}")
        lines += [f"{'':<{width}}  {p.upper()}: {r[f'{p}_detail']}" for p in ("a", "b")
                  if r[f"{p}_fate"] == "removed"]
    if diff.changes.height > limit:
        lines.append(f"... and {counted(diff.changes.height - limit, 'more row')}: write every "
                     "changed row with --out FILE (CSV), or print them with --json")
    return "\n".join(lines)


def _fixed(value: Any, width: int, digits: int = 3, sign: bool = False) -> str:
    if value is None or (isinstance(value, float) and np.isnan(value)):
        return "-".rjust(width)
    if isinstance(value, bool):
        return ("yes" if value else "no").ljust(width)
    if isinstance(value, float):
        return f"{value:{'+' if sign else ''}.{digits}f}".rjust(width)
    return str(value).ljust(width)


def _detection_text(title: str, block: Mapping[str, Any]) -> list[str]:
    lines = [title, f"  {'stage':<24}{'meant to catch':<22}{'removed':>8}{'faulty':>8}"
                    f"{'found':>7}{'precision':>10}{'recall':>8}"]
    every = {"stage": "all stages", "meant_for": ["any fault"], **block["all_stages"]}
    for st in [*block["stages"], every]:
        meant = ", ".join(st.get("meant_for", [])) or "nothing"
        lines.append(f"  {str(st['stage'])[:23]:<24}{meant[:21]:<22}{st['removed']:>8,}"
                     f"{st['faulty']:>8,}{st['found']:>7,}{_fixed(st['precision'], 10)}"
                     f"{_fixed(st['recall'], 8)}")
    lines.append("  recall = found / faulty; faulty: the training rows (over all folds) with a "
                 "fault the stage is meant to catch that reached it; all stages: every fault")
    return lines


# Per task: the plan's words, the baseline (words, key, format), the score columns
# (header, key, width, digits) and the difference column (key, width).
_LAYOUTS: dict[str, tuple[str, tuple[str, str, str], tuple[tuple[str, str, int, int], ...],
                          tuple[str, int], str]] = {
    "classification": (
        "stratified {folds}-fold cross-validation", ("majority-class baseline",
                                                     "baseline_accuracy", ".3f"),
        (("accuracy", "accuracy", 9, 3), ("sd", "accuracy_std", 7, 3),
         ("bal.acc", "balanced_accuracy", 9, 3), ("macroF1", "macro_f1", 9, 3)),
        ("accuracy_difference", 8), "best k"),
    "regression": (
        "{folds}-fold cross-validation stratified by target quantiles",
        ("training-mean baseline RMSE", "baseline_rmse", ".4g"),
        (("RMSE", "rmse", 11, 4), ("sd", "rmse_std", 9, 3), ("MAE", "mae", 11, 4),
         ("R2", "r2", 8, 3)),
        ("rmse_difference", 10), "best k by RMSE"),
}


def _injected_title(n: Mapping[str, Any]) -> str:
    if n.get("kind") == "outliers":
        low, high = n["shift_sds"]
        return (f"injected outliers ({n['rate']:.1%} of training targets moved by {low:g} to "
                f"{high:g} standard deviations, {n['moved']:,} over all folds):")
    return f"injected noise ({n['rate']:.1%} of training labels, {n['flipped']:,} flips over all folds):"


def ranking_text(e: Mapping[str, Any]) -> str:
    """The ranked comparison of variants, ending with the recommendation, for the terminal.

    Examples
    --------
    >>> row = {"rank": 1, "variant": "no curation", "accuracy": 0.9, "balanced_accuracy": 0.9,
    ...        "kept_share": 1.0, "difference_to_none": 0.0, "p_value_to_none": 1.0,
    ...        "difference_to_best": 0.01, "p_value_to_best": 0.5, "model": "knn", "k": 1}
    >>> print(ranking_text({"folds": 5, "repeats": 1, "seed": 0, "rows": 10, "ranking": [row],
    ...                     "recommendation": "keep every row"}).splitlines()[-1])
    keep every row
    """
    first = e["ranking"][0]
    by = f"{first['k']}-NN" if first["k"] is not None else str(first["model"])
    regression = "rmse" in first
    # (header, key, width, digits) of the two scores; RMSE and MAE are in target units
    cols = ((("RMSE", "rmse", 11, 4), ("MAE", "mae", 11, 4)) if regression else
            (("accuracy", "accuracy", 9, 3), ("bal.acc", "balanced_accuracy", 9, 3)))
    width, digits = cols[0][2], cols[0][3]
    plan = (f"{e['folds']}-fold cross-validation stratified by target quantiles" if regression
            else f"stratified {e['folds']}-fold cross-validation")
    lines = [f"{plan} x {e['repeats']} repeat(s), seed {e['seed']}, {e['rows']:,} rows; every "
             f"variant on the same folds, test folds never curated; ranked by {by} "
             + ("RMSE (lowest first)" if regression else "accuracy"), "",
             f"{'':>3} {'variant':<34}" + "".join(f"{h:>{w}}" for h, _, w, _ in cols)
             + f"{'kept':>7}{'vs none':>{width}}{'p':>7}{'vs best':>{width}}{'p':>7}"]
    for r in e["ranking"]:
        lines.append(f"{r['rank']:>3} {str(r['variant'])[:33]:<34}"
                     + "".join(_fixed(r[k], w, d) for _, k, w, d in cols)
                     + f"{_fixed(r['kept_share'], 7, 2)}"
                     f"{_fixed(r['difference_to_none'], width, digits, True)}"
                     f"{_fixed(r['p_value_to_none'], 7, 2)}"
                     f"{_fixed(r['difference_to_best'], width, digits, True)}"
                     f"{_fixed(r['p_value_to_best'], 7, 2)}")
    return "\n".join([*lines, "", e["recommendation"]])


def evaluation_text(e: Mapping[str, Any]) -> str:
    """The evaluation as a plain-text table for the terminal, laid out for its task.

    Examples
    --------
    >>> print(evaluation_text({"folds": 2, "repeats": 1, "seed": 0, "rows": 10,
    ...     "baseline_accuracy": 0.5, "kept_share": 0.8, "best_k": {},
    ...     "lookup": {"k": 1, "full_ms_per_1000": 2.0, "curated_ms_per_1000": 1.0},
    ...     "results": [], "noise": None, "truth": None}).splitlines()[0])
    stratified 2-fold cross-validation x 1 repeat(s), seed 0, 10 rows; test folds never curated
    """
    plan, (words, key, form), columns, (diff, width), best = _LAYOUTS[e.get("task", "classification")]
    lines = [f"{plan.format(folds=e['folds'])} x {e['repeats']} repeat(s), seed "
             f"{e['seed']}, {e['rows']:,} rows; test folds never curated",
             f"{words} {e[key]:{form}}; training rows kept "
             f"{e['kept_share']:.3f}; ms per 1,000 lookups of {e['lookup']['k']} neighbours: "
             f"full {e['lookup']['full_ms_per_1000']:.1f}, curated "
             f"{e['lookup']['curated_ms_per_1000']:.1f}", "",
             f"{'model':<24}{'k':<5}{'curated':<9}"
             + "".join(f"{head:>{w}}" for head, _, w, _ in columns)
             + f"{'kept':>7}{'diff':>{width}}{'p':>8}"]
    for r in e["results"]:
        name = str(r["model"]).rsplit(".", 1)[-1][:23]
        k = "-" if r["k"] is None else r["k"]
        lines.append(f"{name:<24}{_fixed(k, 5)}{_fixed(r['curated'], 9)}"
                     + "".join(_fixed(r[m], w, d) for _, m, w, d in columns)
                     + f"{_fixed(r['kept_share'], 7, 2)}{_fixed(r.get(diff), width, 3, True)}"
                     f"{_fixed(r.get('p_value'), 8)}")
    lines += [f"warning: {w}" for w in [*e.get("warnings", []), *over_limit_notes(e)]]
    if e["best_k"]:
        lines.append(f"{best}: {e['best_k'].get('uncurated')} without curation, "
                     f"{e['best_k'].get('curated')} with curation")
    if e.get("noise"):
        lines += ["", *_detection_text(_injected_title(e["noise"]), e["noise"])]
    if e.get("truth"):
        lines += ["", *_detection_text(f"known faults from {e['truth']['file']}:", e["truth"]),
                  "  recall of all stages by kind of fault: " + ", ".join(
                      f"{kind} {v['recall']:.3f} ({v['found']:,} of {v['faulty']:,})"
                      for kind, v in e["truth"]["by_fault"].items())]
    return "\n".join(lines)
