"""The report's ranked comparison of pipeline variants, when `curate evaluate` compared some.

A ranked list and one sentence, as on the terminal; each number carries its key
path in ``evaluation.json`` (``evaluation.ranking.<i>.<key>``).
"""

from __future__ import annotations

import html
from collections.abc import Mapping
from typing import Any

from curate.report.cells import cell, table

__all__ = ["ranking_html"]


def ranking_html(e: Mapping[str, Any]) -> str:
    """HTML for the ranking and its recommendation; empty for a single pipeline.

    Examples
    --------
    >>> ranking_html({"results": []})
    ''
    """
    if not e.get("ranking"):
        return ""
    first = e["ranking"][0]
    regression = "rmse" in first
    scores = ("rmse", "mae") if regression else ("accuracy", "balanced_accuracy")
    keys = (*scores, "kept_share", "difference_to_none", "p_value_to_none",
            "difference_to_best", "p_value_to_best")
    rows = [[cell(r["rank"]), cell(r["variant"]),
             *(cell(r[k], f"evaluation.ranking.{i}.{k}", percent=k == "kept_share") for k in keys)]
            for i, r in enumerate(e["ranking"])]
    head = ["rank", "variant", *(("RMSE", "MAE") if regression else
                                 ("accuracy", "balanced accuracy")), "rows kept",
            "difference to no curation", "p-value", "difference to the best", "p-value"]
    by = f"{first['k']}-NN" if first["k"] is not None else str(first["model"])
    return (f"<h3>Which cleaning helps this table?</h3><p>Every variant ran on the same folds; "
            f"ranked by {html.escape(by)} "
            f"{'RMSE, lowest first' if regression else 'accuracy'}. The tables below are the best-ranked "
            f"variant's, {html.escape(str(e.get('variant')))!s}.</p>"
            + table(head, rows)
            + f"<p><strong>{html.escape(e['recommendation'])}.</strong></p>")
