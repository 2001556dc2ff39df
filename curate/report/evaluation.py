"""The report's evaluation section, for classification and for regression evaluations.

Both read the evaluation's dictionary the same way: the plan, the baseline and
lookup times, one row per results record, the best k, the score against k, and
the detection of injected faults (flipped labels, or moved targets) and of known
faults. What differs is declared once per task in :data:`LAYOUTS`.
"""

from __future__ import annotations

import html
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from curate.report.parts import cell, detection_table, image, known_faults, over_limit_notes, table

__all__ = ["LAYOUTS", "Layout", "evaluation_html"]


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
        head=("accuracy", "sd", "balanced accuracy", "macro F1", "rows kept", "difference",
              "p-value"),
        columns=("accuracy", "accuracy_std", "balanced_accuracy", "macro_f1", "kept_share",
                 "accuracy_difference", "p_value"),
        score="accuracy", best_by="mean accuracy",
        plot=("accuracy on untouched test folds", "majority-class baseline",
              "accuracy against k, with and without curation")),
    "regression": Layout(
        plan="{folds}-fold cross-validation stratified by the target's quantile bins",
        baseline=("training-mean baseline RMSE", "baseline_rmse"),
        head=("RMSE", "sd", "MAE", "R²", "rows kept", "RMSE difference", "p-value"),
        columns=("rmse", "rmse_std", "mae", "r2", "kept_share", "rmse_difference", "p_value"),
        score="rmse", best_by="mean RMSE",
        plot=("RMSE on untouched test folds", "training-mean baseline",
              "RMSE against k, with and without curation")),
}


def _injected(e: Mapping[str, Any]) -> str:
    n = e.get("noise")
    if not n:
        return ""
    if n.get("kind") == "outliers":
        low, high = n["shift_sds"]
        what = (f"<h3>Injected outliers</h3><p>In every training part, a seeded {n['rate']:.1%} "
                f"of targets were moved up or down by {low:g} to {high:g} standard deviations "
                f"before curation ({n['moved']:,} moved over all folds). Precision: share of "
                "removed rows that were moved; recall: share of moved rows removed.</p>")
    else:
        towards = f" towards class {n['towards']!r}" if n["towards"] is not None else \
            " to another class drawn uniformly"
        what = (f"<h3>Injected label noise</h3><p>In every training part, a seeded "
                f"{n['rate']:.1%} of rows got a wrong label{html.escape(towards)} before "
                f"curation ({n['flipped']:,} flips over all folds). Precision: share of "
                "removed rows that were flipped; recall: share of flipped rows removed.</p>")
    return what + detection_table(n, "evaluation.noise")


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
                    cell(e["kept_share"], "evaluation.kept_share"),
                    cell(e["lookup"]["full_ms_per_1000"], "evaluation.lookup.full_ms_per_1000"),
                    cell(e["lookup"]["curated_ms_per_1000"],
                         "evaluation.lookup.curated_ms_per_1000")]])
    rows = [[cell(r["model"]), cell(r["k"]), cell(r["curated"]),
             *(cell(r[m], f"evaluation.results.{i}.{m}") if m in r else cell(None)
               for m in lay.columns)]
            for i, r in enumerate(e["results"])]
    best = e.get("best_k") or {}
    best_text = (f"<p>Best k by {lay.best_by}: {best.get('uncurated')} without curation, "
                 f"{best.get('curated')} with curation.</p>" if best else "")
    plot = ""
    if any(r["k"] is not None for r in e["results"]):
        label, baseline_label, alt = lay.plot
        plot = image(score_plot(e["results"], lay.score, label, e[key], baseline_label), alt)
    warnings = "".join(f"<p><strong>Warning: {html.escape(w)}.</strong></p>"
                       for w in over_limit_notes(e))
    return (intro + warnings + facts + table(["model", "k", "curated", *lay.head], rows)
            + best_text + plot + "\n".join(p for p in (_injected(e), known_faults(e)) if p))
