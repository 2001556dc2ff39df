"""The evaluation's part of a report: the cross-validated scores, warnings and fault detection."""

from __future__ import annotations

import html
from collections.abc import Mapping
from typing import Any

from curate.report.cells import cell, image, table

__all__ = ["evaluation_section", "over_limit_notes"]


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


def _noise(e: Mapping[str, Any]) -> str:
    parts = []
    if e.get("noise"):
        n = e["noise"]
        towards = f" towards class {n['towards']!r}" if n["towards"] is not None else \
            " to another class drawn uniformly"
        parts.append(f"<h3>Injected label noise</h3><p>In every training part, a seeded "
                     f"{n['rate']:.1%} of rows got a wrong label{html.escape(towards)} before "
                     f"curation ({n['flipped']:,} flips over all folds).</p>"
                     + _detection_table(n, "evaluation.noise"))
    if e.get("truth"):
        t = e["truth"]
        kinds = ", ".join(f"{k}: {v:,}" for k, v in t["faults"].items())
        parts.append(f"<h3>Known faults</h3><p>Rows marked faulty in {html.escape(t['file'])} "
                     f"({html.escape(kinds)} among the evaluated rows; each counts in every fold "
                     "whose training part holds it).</p>" + _detection_table(t, "evaluation.truth")
                     + table(["kind of fault", "in training parts", "removed", "recall"],
                             [[cell(kind), *(cell(v[m], f"evaluation.truth.by_fault.{kind}.{m}")
                                             for m in ("faulty", "found", "recall"))]
                              for kind, v in t["by_fault"].items()]))
    return "\n".join(parts)


def over_limit_notes(e: Mapping[str, Any]) -> list[str]:
    """One sentence per stage that went over its max_removed_share in some folds (shared by
    the report and the command line's text)."""
    total = e["folds"] * e["repeats"]
    return [f"stage {name!r} removed more of a class than its max_removed_share in {n} of "
            f"{total} folds: a run on such data stops there; the numbers show what it removed "
            "anyway" for name, n in (e.get("over_limit") or {}).items()]


def evaluation_section(e: Mapping[str, Any]) -> str:
    from curate.report.plots import accuracy_plot

    intro = (f"<p>Stratified {e['folds']}-fold cross-validation, {e['repeats']} repeat(s), seed "
             f"{e['seed']}, on {e['rows']:,} rows. The stages ran on the training part of each "
             "fold only; test folds were never curated, and the same folds served both columns. "
             f"p-values: {html.escape(e['test'])}.</p>")
    facts = table(["majority-class baseline", "training rows kept", "ms per 1,000 lookups, full",
                   "ms per 1,000 lookups, curated"],
                  [[cell(e["baseline_accuracy"], "evaluation.baseline_accuracy"),
                    cell(e["kept_share"], "evaluation.kept_share", percent=True),
                    cell(e["lookup"]["full_ms_per_1000"], "evaluation.lookup.full_ms_per_1000"),
                    cell(e["lookup"]["curated_ms_per_1000"], "evaluation.lookup.curated_ms_per_1000")]])
    head = ["model", "k", "curated", "accuracy", "sd", "bal. acc.", "macro F1", "rows kept",
            "diff.", "p-value"]
    rows = [[cell(str(r["model"]).rsplit(".", 1)[-1]), cell(r["k"]), cell(r["curated"]),
             *(cell(r[m], f"evaluation.results.{i}.{m}", percent=m == "kept_share")
               if m in r else cell(None)
               for m in ("accuracy", "accuracy_std", "balanced_accuracy", "macro_f1",
                         "kept_share", "accuracy_difference", "p_value"))]
            for i, r in enumerate(e["results"])]
    best = e.get("best_k") or {}
    best_text = (f"<p>Best k by mean accuracy: {best.get('uncurated')} without curation, "
                 f"{best.get('curated')} with curation.</p>" if best else "")
    plot = ""
    if any(r["k"] is not None for r in e["results"]):
        plot = image(accuracy_plot(e["results"], e["baseline_accuracy"]),
                      "accuracy against k, with and without curation")
    warnings = "".join(f"<p><strong>Warning: {html.escape(w)}.</strong></p>"
                       for w in [*e.get("warnings", []), *over_limit_notes(e)])
    from curate.report.ranking import ranking_html

    return (intro + ranking_html(e) + warnings + facts + table(head, rows, wide=True) + best_text
            + plot + _noise(e))
