"""The report's sections for a regression run: the target before and after, and residuals.

They take the place of the class balance: a table of the target's count, mean,
standard deviation and quartiles in the input and in the kept rows (from
``summary.json``'s ``target``) with both histograms, and each row's target
against the mean target of its nearest rows, removed rows marked.
"""

from __future__ import annotations

import html
from typing import TYPE_CHECKING

import numpy as np

from curate.report.cells import cell, image, table
from curate.report.parts import MAX_QUERIES, reasons_of_valid, sample

if TYPE_CHECKING:
    from curate.pipeline.records import RunResult

__all__ = ["RESIDUAL_K", "residual_section", "target_section"]

RESIDUAL_K = 5  # neighbours whose mean target each row is drawn against
_STATS = ("rows", "mean", "sd", "min", "q25", "median", "q75", "max")


def target_section(result: RunResult) -> str:
    """The target's distribution in the input and in the kept rows: a table and histograms."""
    from curate.report.regression_plots import target_plot

    s = result.summary
    target = s["target"]
    rows = [[cell(name), cell(target["before"][name], f"target.before.{name}"),
             cell(target["after"][name], f"target.after.{name}")] for name in _STATS]
    prep = result.prepared
    kept = np.isin(prep.valid_positions, result.kept_positions)
    values = np.asarray(prep.space_labels, dtype=np.float64)
    return (f"<p>Task: {html.escape(s['task']['task'])} ({html.escape(s['task']['reason'])}).</p>"
            + table(["", "input (rows that passed the schema)", "kept"], rows)
            + image(target_plot(values, values[kept], target["unit"]),
                    "the target's distribution before and after"))


def residual_section(result: RunResult) -> str:
    """Each sampled row's target against the mean target of its nearest rows in the input."""
    from curate.neighbours.search import kneighbors
    from curate.report.regression_plots import residual_plot

    space = result.prepared.space
    if space.n <= RESIDUAL_K:
        return '<p class="note">Too few rows to compare targets with their neighbours.</p>'
    pick = sample(space.n, MAX_QUERIES, result.summary["seed"] + 2)
    y = np.asarray(result.prepared.space_labels, dtype=np.float64)
    predicted = y[kneighbors(space, RESIDUAL_K, queries=pick)[1]].mean(axis=1)
    return (f'<p class="note">Each row\'s target minus the mean target of its {RESIDUAL_K} '
            f"nearest other rows in the input (before any stage), {len(pick):,} rows"
            + (" sampled with a seed" if len(pick) < space.n else "")
            + ". Rows far from the zero line disagree with their neighbourhood.</p>"
            + image(residual_plot(predicted, y[pick] - predicted, reasons_of_valid(result, pick),
                                  result.summary["target"]["unit"]),
                    "residuals against the neighbours' mean, removed rows marked"))
