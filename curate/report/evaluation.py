"""The evaluation's part of a report, for classification and for regression evaluations.

Both read the evaluation's dictionary the same way: the plan, the baseline and
lookup times, one row per results record, the best k, the score against k, the
warnings, and the detection of injected faults (flipped labels, or moved targets)
and of known faults. What differs is declared once per task in :data:`LAYOUTS`.
"""

from __future__ import annotations

import html
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from curate.report.cells import cell, image, table

__all__ = ["LAYOUTS", "Layout", "evaluation_html", "evaluation_section", "over_limit_notes"]


@dataclass(frozen=True)
class Layout:
    """What one task's evaluation section shows: the plan's words, the baseline, the columns."""

    plan: str
    baseline: tuple[str, str]
    head: tuple[str, ...]
    columns: tuple[str, ...]
    score: str
    best_by: str
    plot: tuple[str, str, str]


LAYOUTS = {
    "classification": Layout(
        plan="Stratified {folds}-fold cross-validation",
        baseline=("majority-class baseline", "baseline_accuracy"),
        head=("accuracy", "sd", "bal. acc.", "macro F1", "rows kept", "diff.", "p-value"),
        columns=("accuracy", "accuracy_std", "balanced_accuracy", "macro_f1", "kept_share",
                 "accuracy_difference", "p_value"),
        score="accuracy", best_by="mean accuracy",
        plot=("accuracy on untouched test folds", "majority-class baseline",
              "accuracy against k, with and without curation")),
    "regression": Layout(
        plan="{folds}-fold cross-validation stratified by the target's quantile bins",
        baseline=("training-mean baseline RMSE", "baseline_rmse"),
        head=("RMSE", "sd", "MAE", "R²", "rows kept", "RMSE diff.", "p-value"),
        columns=("rmse", "rmse_std", "mae", "r2", "kept_share", "rmse_difference", "p_value"),
        score="rmse", best_by="mean RMSE",
        plot=("RMSE on untouched test folds", "training-mean baseline",
              "RMSE against k, with and without curation")),
}


def _detection_table(block: Mapping[str, Any], key: str) -> str:
    head = ["stage", "meant to catch", "removed", "faulty (denominator)", "found", "precision",
            "recall"]
    counts = ("removed", "faulty", "found")
    rows = [[cell(st["stage"]), cell(", ".join(st.get("meant_for", [])) or "nothing"),
             *(cell(st[m], f"{key}.stages.{i}.{m}") for m in counts),
             *(cell(st[m], f"{key}.stages.{i}.{m}", percent=True) for m in ("precision", "recall"))]
            for i, st in enumerate(block["stages"])]
    every = block["all_stages"]
    rows.append([cell("all stages"), cell("any fault"),
                 *(cell(every[m], f"{key}.all_stages.{m}") for m in counts),
                 *(cell(every[m], f"{key}.all_stages.{m}", percent=True)
                   for m in ("precision", "recall"))])
    return table(head, rows) + (
        '<p class="note">Recall = found / faulty. A stage\'s faulty count is its denominator: '
        "the training rows, over all folds, with a fault of a kind the stage's method is meant "
        "to catch (<code>curate methods</code> lists them) that reached the stage. Precision is "
        "the share of its removed rows with such a fault. For all stages: every known fault.</p>")


def _injected(e: Mapping[str, Any]) -> str:
    n = e.get("noise")
    if not n:
        return ""
    if n.get("kind") == "outliers":
        low, high = n["shift_sds"]
        what = (f"<h3>Injected outliers</h3><p>In every training part, a seeded {n['rate']:.1%} "
                f"of targets were moved up or down by {low:g} to {high:g} standard deviations "
                f"before curation ({n['moved']:,} moved over all folds).</p>")
    else:
        towards = f" towards class {n['towards']!r}" if n["towards"] is not None else \
            " to another class drawn uniformly"
        what = (f"<h3>Injected label noise</h3><p>In every training part, a seeded "
                f"{n['rate']:.1%} of rows got a wrong label{html.escape(towards)} before "
                f"curation ({n['flipped']:,} flips over all folds).</p>")
    return what + _detection_table(n, "evaluation.noise")


def _known_faults(e: Mapping[str, Any]) -> str:
    if not e.get("truth"):
        return ""
    t = e["truth"]
    kinds = ", ".join(f"{k}: {v:,}" for k, v in t["faults"].items())
    return (f"<h3>Known faults</h3><p>Rows marked faulty in {html.escape(str(t['file']))} "
            f"({html.escape(kinds)} among the evaluated rows; each counts in every fold "
            "whose training part holds it).</p>" + _detection_table(t, "evaluation.truth")
            + table(["kind of fault", "in training parts", "removed", "recall"],
                    [[cell(kind), *(cell(v[m], f"evaluation.truth.by_fault.{kind}.{m}")
                                    for m in ("faulty", "found", "recall"))]
                     for kind, v in t["by_fault"].items()]))


def over_limit_notes(e: Mapping[str, Any]) -> list[str]:
    """One sentence per stage that went over its max_removed_share in some folds (shared by
    the report and the command line's text).

    Examples
    --------
    >>> over_limit_notes({"folds": 5, "repeats": 1, "task": "regression",
    ...                   "over_limit": {"far": 2}})[0][:45]
    "stage 'far' removed more of its rows than its"
    """
    total = e["folds"] * e["repeats"]
    what = "of its rows" if e.get("task") == "regression" else "of a class"
    return [f"stage {name!r} removed more {what} than its max_removed_share in {n} of "
            f"{total} folds: a run on such data stops there; the numbers show what it removed "
            "anyway" for name, n in (e.get("over_limit") or {}).items()]


def evaluation_html(e: Mapping[str, Any]) -> str:
    """The evaluation section of the report, laid out for the evaluation's task.

    Examples
    --------
    >>> e = {"task": "regression", "folds": 2, "repeats": 1, "seed": 0, "rows": 10,
    ...      "test": "t", "baseline_rmse": 5.0, "kept_share": 0.8, "best_k": {},
    ...      "lookup": {"k": 1, "full_ms_per_1000": 2.0, "curated_ms_per_1000": 1.0},
    ...      "results": [], "noise": None, "truth": None}
    >>> "training-mean baseline RMSE" in evaluation_html(e)
    True
    """
    from curate.report.plots import score_plot

    lay = LAYOUTS[e.get("task", "classification")]
    intro = (f"<p>{lay.plan.format(folds=e['folds'])}, {e['repeats']} repeat(s), seed "
             f"{e['seed']}, on {e['rows']:,} rows. The stages ran on the training part of each "
             "fold only; test folds were never curated, and the same folds served both columns. "
             f"p-values: {html.escape(e['test'])}.</p>")
    name, key = lay.baseline
    facts = table([name, "training rows kept", "ms per 1,000 lookups, full",
                   "ms per 1,000 lookups, curated"],
                  [[cell(e[key], f"evaluation.{key}"),
                    cell(e["kept_share"], "evaluation.kept_share", percent=True),
                    cell(e["lookup"]["full_ms_per_1000"], "evaluation.lookup.full_ms_per_1000"),
                    cell(e["lookup"]["curated_ms_per_1000"],
                         "evaluation.lookup.curated_ms_per_1000")]])
    rows = [[cell(str(r["model"]).rsplit(".", 1)[-1]), cell(r["k"]), cell(r["curated"]),
             *(cell(r[m], f"evaluation.results.{i}.{m}", percent=m == "kept_share")
               if m in r else cell(None) for m in lay.columns)]
            for i, r in enumerate(e["results"])]
    best = e.get("best_k") or {}
    best_text = (f"<p>Best k by {lay.best_by}: {best.get('uncurated')} without curation, "
                 f"{best.get('curated')} with curation.</p>" if best else "")
    plot = ""
    if any(r["k"] is not None for r in e["results"]):
        label, baseline_label, alt = lay.plot
        plot = image(score_plot(e["results"], lay.score, label, e[key], baseline_label), alt)
    warnings = "".join(f"<p><strong>Warning: {html.escape(w)}.</strong></p>"
                       for w in [*e.get("warnings", []), *over_limit_notes(e)])
    from curate.report.ranking import ranking_html

    return (intro + ranking_html(e) + warnings + facts
            + table(["model", "k", "curated", *lay.head], rows, wide=True)
            + best_text + plot + "\n".join(p for p in (_injected(e), _known_faults(e)) if p))


evaluation_section = evaluation_html  # the name the report's page builder has used since the split
