"""The report's sections for numeric targets, and the evaluation as text for the terminal.

Sections follow :mod:`curate.report`: numbers that live in ``summary.json`` or
``evaluation.json`` carry their key path in ``data-key`` and exact value in
``data-value``. The target section replaces the class balance; the residual
section shows where the removed rows lie against their neighbours' mean; the
evaluation section and :func:`regression_evaluation_text` read a regression
evaluation (RMSE, MAE, R², the training-mean baseline).
"""

from __future__ import annotations

import html
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np

from curate.report import (
    MAX_QUERIES,
    _detection_table,
    _detection_text,
    _fixed,
    _image,
    _over_limit,
    _reasons_of_valid,
    _sample,
    cell,
    table,
)

if TYPE_CHECKING:
    from curate.pipeline import RunResult

__all__ = ["RESIDUAL_K", "regression_evaluation_html", "regression_evaluation_text",
           "residual_section", "target_section"]

RESIDUAL_K = 5  # neighbours whose mean target each row is drawn against
_STATS = ("rows", "mean", "sd", "min", "q25", "median", "q75", "max")


def target_section(result: RunResult, unit: str = "") -> str:
    """The target's distribution in the input and in the kept rows: a table and histograms."""
    from curate.plots_regression import target_plot

    target = result.summary["target"]
    rows = [[cell(name), cell(target["before"][name], f"target.before.{name}"),
             cell(target["after"][name], f"target.after.{name}")] for name in _STATS]
    prep = result.prepared
    kept = np.isin(prep.valid_positions, result.kept_positions)
    values = np.asarray(prep.space_labels, dtype=np.float64)
    return (f"<p>Task: {html.escape(target['task'])} ({html.escape(target['reason'])}).</p>"
            + table(["", "input (rows that passed the schema)", "kept"], rows)
            + _image(target_plot(values, values[kept], unit), "target before and after"))


def residual_section(result: RunResult, unit: str = "") -> str:
    """Each sampled row's target against the mean target of its nearest rows in the input."""
    from curate.neighbours import kneighbors
    from curate.plots_regression import residual_plot

    space = result.prepared.space
    if space.n <= RESIDUAL_K:
        return '<p class="note">Too few rows to compare targets with their neighbours.</p>'
    pick = _sample(space.n, MAX_QUERIES, result.summary["seed"] + 2)
    y = np.asarray(result.prepared.space_labels, dtype=np.float64)
    nbr = kneighbors(space, RESIDUAL_K, queries=pick)[1]
    predicted = y[nbr].mean(axis=1)
    return (f'<p class="note">Each row\'s target minus the mean target of its {RESIDUAL_K} '
            f"nearest other rows in the input (before any stage), {len(pick):,} rows"
            + (" sampled with a seed" if len(pick) < space.n else "")
            + ". Rows far from the zero line disagree with their neighbourhood.</p>"
            + _image(residual_plot(predicted, y[pick] - predicted,
                                   _reasons_of_valid(result)[pick], unit),
                     "residuals against the neighbours' mean, removed rows marked"))


def _outliers_html(e: Mapping[str, Any]) -> str:
    n = e.get("noise")
    if not n:
        return ""
    low, high = n["shift_sds"]
    return (f"<h3>Injected outliers</h3><p>In every training part, a seeded {n['rate']:.1%} of "
            f"targets were moved up or down by {low:g} to {high:g} standard deviations before "
            f"curation ({n['moved']:,} moved over all folds). Precision: share of removed rows "
            "that were moved; recall: share of moved rows removed.</p>"
            + _detection_table(n, "evaluation.noise"))


def regression_evaluation_html(e: Mapping[str, Any]) -> str:
    """The evaluation section of the report for a regression evaluation."""
    from curate.plots_regression import rmse_plot

    intro = (f"<p>{e['folds']}-fold cross-validation stratified by the target's quantile bins, "
             f"{e['repeats']} repeat(s), seed {e['seed']}, on {e['rows']:,} rows. The stages ran "
             "on the training part of each fold only; test folds were never curated, and the "
             f"same folds served both columns. p-values: {html.escape(e['test'])}.</p>")
    facts = table(["training-mean baseline RMSE", "training rows kept",
                   "ms per 1,000 lookups, full", "ms per 1,000 lookups, curated"],
                  [[cell(e["baseline_rmse"], "evaluation.baseline_rmse"),
                    cell(e["kept_share"], "evaluation.kept_share"),
                    cell(e["lookup"]["full_ms_per_1000"], "evaluation.lookup.full_ms_per_1000"),
                    cell(e["lookup"]["curated_ms_per_1000"],
                         "evaluation.lookup.curated_ms_per_1000")]])
    head = ["model", "k", "curated", "RMSE", "sd", "MAE", "R²", "rows kept", "RMSE difference",
            "p-value"]
    rows = [[cell(r["model"]), cell(r["k"]), cell(r["curated"]),
             *(cell(r[m], f"evaluation.results.{i}.{m}") if m in r else cell(None)
               for m in ("rmse", "rmse_std", "mae", "r2", "kept_share", "rmse_difference",
                         "p_value"))]
            for i, r in enumerate(e["results"])]
    best = e.get("best_k") or {}
    best_text = (f"<p>Best k by mean RMSE: {best.get('uncurated')} without curation, "
                 f"{best.get('curated')} with curation.</p>" if best else "")
    plot = ""
    if any(r["k"] is not None for r in e["results"]):
        plot = _image(rmse_plot(e["results"], e["baseline_rmse"]),
                      "RMSE against k, with and without curation")
    warnings = "".join(f"<p><strong>Warning: {html.escape(w)}.</strong></p>"
                       for w in _over_limit(e))
    return intro + warnings + facts + table(head, rows) + best_text + plot + _outliers_html(e)


def regression_evaluation_text(e: Mapping[str, Any]) -> str:
    """A regression evaluation as a plain-text table for the terminal.

    Examples
    --------
    >>> print(regression_evaluation_text({"folds": 2, "repeats": 1, "seed": 0, "rows": 10,
    ...     "baseline_rmse": 5.0, "kept_share": 0.8, "best_k": {},
    ...     "lookup": {"k": 1, "full_ms_per_1000": 2.0, "curated_ms_per_1000": 1.0},
    ...     "results": [], "noise": None, "truth": None}).splitlines()[0])
    2-fold cross-validation stratified by target quantiles x 1 repeat(s), seed 0, 10 rows; test \
folds never curated
    """
    lines = [f"{e['folds']}-fold cross-validation stratified by target quantiles x "
             f"{e['repeats']} repeat(s), seed {e['seed']}, {e['rows']:,} rows; test folds never "
             "curated",
             f"training-mean baseline RMSE {e['baseline_rmse']:.4g}; training rows kept "
             f"{e['kept_share']:.3f}; ms per 1,000 lookups of {e['lookup']['k']} neighbours: "
             f"full {e['lookup']['full_ms_per_1000']:.1f}, curated "
             f"{e['lookup']['curated_ms_per_1000']:.1f}", "",
             f"{'model':<24}{'k':<5}{'curated':<9}{'RMSE':>11}{'sd':>9}{'MAE':>11}{'R2':>8}"
             f"{'kept':>7}{'diff':>10}{'p':>8}"]
    for r in e["results"]:
        name = str(r["model"]).rsplit(".", 1)[-1][:23]
        k = "-" if r["k"] is None else r["k"]
        lines.append(f"{name:<24}{_fixed(k, 5)}{_fixed(r['curated'], 9)}"
                     f"{_fixed(r['rmse'], 11, 4)}{_fixed(r['rmse_std'], 9, 3)}"
                     f"{_fixed(r['mae'], 11, 4)}{_fixed(r['r2'], 8)}"
                     f"{_fixed(r['kept_share'], 7, 2)}"
                     f"{_fixed(r.get('rmse_difference'), 10, 3, True)}"
                     f"{_fixed(r.get('p_value'), 8)}")
    lines += [f"warning: {w}" for w in _over_limit(e)]
    if e["best_k"]:
        lines.append(f"best k by RMSE: {e['best_k'].get('uncurated')} without curation, "
                     f"{e['best_k'].get('curated')} with curation")
    if e.get("noise"):
        n = e["noise"]
        lines += ["", *_detection_text(f"injected outliers ({n['rate']:.1%} of training targets "
                                       f"moved, {n['moved']:,} over all folds):", n)]
    if e.get("truth"):
        lines += ["", *_detection_text(f"known faults from {e['truth'].get('file')}:", e["truth"]),
                  "  recall of all stages by kind of fault: " + ", ".join(
                      f"{kind} {v['recall']:.3f} ({v['found']:,} of {v['faulty']:,})"
                      for kind, v in e["truth"]["by_fault"].items())]
    return "\n".join(lines)
