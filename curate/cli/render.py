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

from curate.io.diff import RunDiff
from curate.methods.base import MethodInfo
from curate.report.html import over_limit_notes

__all__ = ["diff_text", "distances_text", "evaluation_text", "methods_table", "methods_text",
           "ranking_text", "review_text", "summary_text"]


def summary_text(summary: dict[str, Any], out: Path) -> str:
    """A run's summary in a few lines: rows in, kept, removed, and each stage."""
    lines = [f"{summary['rows_in']} rows in, {summary['rows_kept']} kept, "
             f"{summary['rows_removed']} removed ({summary['rows_quarantined']} quarantined)"]
    for st in summary["stages"]:
        reasons = ", ".join(f"{k} {v}" for k, v in st["by_reason"].items()) or "nothing"
        lines.append(f"  {st['name']} ({st['method']}): {st['rows_in']} in, removed {reasons}, "
                     f"{st['seconds']:.2f} s")
    lines.append(f"run folder: {out}")
    return "\n".join(lines)


def distances_text(profile: Mapping[str, Any]) -> str:
    """The distance profile of `curate distances`: quantiles, then one line per radius."""
    lines: list[str] = []
    for key, values in profile.items():
        if key == "candidates":
            lines.append("candidate radius   rows with a same-label row within   would remove   "
                         "conflicting")
            for c in values:
                lines.append(f"  {c['radius']:<16.4g} {c['rows_with_same_label_within']:>30} "
                             f"{c['would_remove']:>14} {c['conflicting_rows']:>13}")
        else:
            lines.append(f"{key}: {json.dumps(values)}")
    return "\n".join(lines)


def methods_table(methods: Mapping[str, MethodInfo]) -> list[dict[str, Any]]:
    """Every method with its parameters, as JSON-ready data (`curate methods --json`)."""
    return [{"key": m.key, "name": m.name, "family": m.family, "reference": m.reference,
             "purpose": m.purpose, "reasons": m.reasons,
             "params": [{"name": p.name, "default": p.default, "allowed": p.allowed(),
                         "doc": p.doc} for p in m.params]} for m in methods.values()]


def methods_text(methods: Mapping[str, MethodInfo]) -> str:
    """Every method with its parameters, for reading (`curate methods`)."""
    lines: list[str] = []
    for info in methods.values():
        lines.append(f"{info.key:<24} {info.name} ({info.family}; {info.reference})")
        lines.append(f"{'':<24} {info.purpose}")
        for p in info.params:
            lines.append(f"{'':<26}{p.name} = {p.default!r}: {p.doc} ({p.allowed()})")
        lines.append("")
    return "\n".join(lines)


def review_text(rows: int, run: str, out: str) -> str:
    """What `curate review` wrote, and what the reviewer does next."""
    return (f"wrote {rows} removed rows of {run} to {out}\n"
            "write keep in the decision column of rows that must stay (empty or remove: no "
            f"objection), then add to [input]: protect_file = \"{out}\"")


def diff_text(diff: RunDiff) -> str:
    """The diff as a table for the terminal: one line per row, then each run's detail."""
    if diff.changes.height == 0:
        return f"no row changed fate from {diff.run_a} to {diff.run_b} ({diff.compared} compared)"
    counts = ", ".join(f"{n} {c}" for c, n in diff.counts().items())
    lines = [f"{diff.changes.height} of {diff.compared} rows changed fate from {diff.run_a} (A) "
             f"to {diff.run_b} (B): {counts}"]
    width = max(6, *(len(r) for r in diff.changes["row_id"]))
    lines.append(f"{'row_id':<{width}}  {'change':<21}  {'run A':<34}  run B")
    for r in diff.changes.iter_rows(named=True):
        a, b = (r[f"{p}_fate"] if r[f"{p}_fate"] == "kept"
                else f"{r[f'{p}_stage']} / {r[f'{p}_reason']}" for p in ("a", "b"))
        lines.append(f"{r['row_id']:<{width}}  {r['change']:<21}  {a:<34}  {b}")
        lines += [f"{'':<{width}}  {p.upper()}: {r[f'{p}_detail']}" for p in ("a", "b")
                  if r[f"{p}_fate"] == "removed"]
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
    lines = [title, f"  {'stage':<28}{'removed':>9}{'found':>9}{'precision':>11}{'recall':>9}"]
    for st in [*block["stages"], {"stage": "all stages", **block["all_stages"]}]:
        lines.append(f"  {str(st['stage'])[:27]:<28}{st['removed']:>9,}{st['found']:>9,}"
                     f"{_fixed(st['precision'], 11)}{_fixed(st['recall'], 9)}")
    return lines


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
    lines = [f"stratified {e['folds']}-fold cross-validation x {e['repeats']} repeat(s), seed "
             f"{e['seed']}, {e['rows']:,} rows; every variant on the same folds, test folds "
             f"never curated; ranked by {by} accuracy", "",
             f"{'':>3} {'variant':<34}{'accuracy':>9}{'bal.acc':>9}{'kept':>7}"
             f"{'vs none':>9}{'p':>7}{'vs best':>9}{'p':>7}"]
    for r in e["ranking"]:
        lines.append(f"{r['rank']:>3} {str(r['variant'])[:33]:<34}{_fixed(r['accuracy'], 9)}"
                     f"{_fixed(r['balanced_accuracy'], 9)}{_fixed(r['kept_share'], 7, 2)}"
                     f"{_fixed(r['difference_to_none'], 9, 3, True)}"
                     f"{_fixed(r['p_value_to_none'], 7, 2)}"
                     f"{_fixed(r['difference_to_best'], 9, 3, True)}"
                     f"{_fixed(r['p_value_to_best'], 7, 2)}")
    return "\n".join([*lines, "", e["recommendation"]])


def evaluation_text(e: Mapping[str, Any]) -> str:
    """The evaluation as a plain-text table for the terminal.

    Examples
    --------
    >>> print(evaluation_text({"folds": 2, "repeats": 1, "seed": 0, "rows": 10,
    ...     "baseline_accuracy": 0.5, "kept_share": 0.8, "best_k": {},
    ...     "lookup": {"k": 1, "full_ms_per_1000": 2.0, "curated_ms_per_1000": 1.0},
    ...     "results": [], "noise": None, "truth": None}).splitlines()[0])
    stratified 2-fold cross-validation x 1 repeat(s), seed 0, 10 rows; test folds never curated
    """
    lines = [f"stratified {e['folds']}-fold cross-validation x {e['repeats']} repeat(s), seed "
             f"{e['seed']}, {e['rows']:,} rows; test folds never curated",
             f"majority-class baseline {e['baseline_accuracy']:.3f}; training rows kept "
             f"{e['kept_share']:.3f}; ms per 1,000 lookups of {e['lookup']['k']} neighbours: "
             f"full {e['lookup']['full_ms_per_1000']:.1f}, curated "
             f"{e['lookup']['curated_ms_per_1000']:.1f}", "",
             f"{'model':<24}{'k':<5}{'curated':<9}{'accuracy':>9}{'sd':>7}{'bal.acc':>9}"
             f"{'macroF1':>9}{'kept':>7}{'diff':>8}{'p':>8}"]
    for r in e["results"]:
        name = str(r["model"]).rsplit(".", 1)[-1][:23]
        k = "-" if r["k"] is None else r["k"]
        lines.append(f"{name:<24}{_fixed(k, 5)}{_fixed(r['curated'], 9)}"
                     f"{_fixed(r['accuracy'], 9)}{_fixed(r['accuracy_std'], 7)}"
                     f"{_fixed(r['balanced_accuracy'], 9)}{_fixed(r['macro_f1'], 9)}"
                     f"{_fixed(r['kept_share'], 7, 2)}{_fixed(r.get('accuracy_difference'), 8, 3, True)}"
                     f"{_fixed(r.get('p_value'), 8)}")
    lines += [f"warning: {w}" for w in over_limit_notes(e)]
    if e["best_k"]:
        lines.append(f"best k: {e['best_k'].get('uncurated')} without curation, "
                     f"{e['best_k'].get('curated')} with curation")
    if e.get("noise"):
        lines += ["", *_detection_text(f"injected noise ({e['noise']['rate']:.1%} of training labels, "
                                       f"{e['noise']['flipped']:,} flips over all folds):", e["noise"])]
    if e.get("truth"):
        lines += ["", *_detection_text(f"known faults from {e['truth']['file']}:", e["truth"]),
                  "  recall of all stages by kind of fault: " + ", ".join(
                      f"{kind} {v['recall']:.3f} ({v['found']:,} of {v['faulty']:,})"
                      for kind, v in e["truth"]["by_fault"].items())]
    return "\n".join(lines)
