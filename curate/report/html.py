"""The self-contained HTML report of a run, and of an evaluation when one ran.

One page, no scripts, no network: tables and base64 PNG pictures. Every number
that also lives in ``summary.json`` (or ``evaluation.json``) is printed from
that same dictionary and carries its key path in ``data-key`` (prefixed
``evaluation.`` for the evaluation's) and its exact value in ``data-value``,
so a test (or a reader's tool) can check that the page and the files agree.
"""

from __future__ import annotations

import html
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np

from curate.report.cells import cell, image, marked, section, table
from curate.report.evaluation import evaluation_section, over_limit_notes
from curate.report.parts import (
    MAX_POINTS,
    MAX_QUERIES,
    principal_components,
    reasons_of_valid,
    sample,
)
from curate.report.regression import residual_section, target_section

if TYPE_CHECKING:
    from curate.pipeline.records import RunResult

__all__ = ["CAUTIONS", "MAX_POINTS", "cell", "image", "over_limit_notes", "render_run", "table"]

CAUTIONS = (
    "Removing rows can strip genuine rare cases and minority groups: editing treats the unusual "
    "as noise. Check what each stage removed from your smallest classes before you use the set.",
    "Never measure accuracy on a cleaned set: curate only the training part of each split "
    "(`curate evaluate` does this), or the scores will be inflated.",
    "Review the audit before using a curated set in high-stakes settings, and follow the "
    "domain's own rules on what data may be discarded.",
)

_STYLE = """body{font-family:system-ui,sans-serif;max-width:64em;margin:2em auto;padding:0 1em;
color:#1b1f23;line-height:1.45}h1{font-size:1.6em}h2{margin-top:1.8em;border-bottom:1px solid #ddd}
table{border-collapse:collapse;margin:.6em 0;max-width:100%}td,th{border:1px solid #c8ccd0;
padding:.25em .6em;text-align:left}td.n{text-align:right;font-variant-numeric:tabular-nums;
white-space:nowrap}table.wide{font-size:.86em}table.wide td,table.wide th{padding:.2em .4em}
img{max-width:100%;height:auto}.note{color:#555;font-size:.92em}code{font-size:.92em}"""


def _headline(s: Mapping[str, Any]) -> str:
    keys = ("rows_in", "rows_kept", "rows_removed", "rows_quarantined", "seconds")
    total = (cell(s["total_seconds"], "total_seconds") if "total_seconds" in s else cell(None))
    main = table(["rows in", "kept", "removed", "quarantined", "stages (s)",
                  "whole command (s)", "seed"],
                 [[*(cell(s[k], k) for k in keys), total, cell(s["seed"], "seed")]])
    timed = ('<p class="note">Stages: the time from the first stage to the summary, the work of '
             "the methods. Whole command: from the start of the command (or of "
             "<code>curate.run</code>) to writing the tables: reading and checking the input, "
             "building the space, the stages and writing kept, removed and audit rows; writing "
             "this report comes after. Python's own start-up is not included.</p>")
    reasons = table(["reason", "rows removed"],
                    [[cell(r), cell(n, f"by_reason.{r}")] for r, n in s["by_reason"].items()])
    facts = table([], [
        [cell("input"), cell(s["input"])],
        [cell("input sha256"), cell(s["input_sha256"])],
        [cell("pipeline"), cell(s["pipeline"])],
        [cell("pipeline sha256"), cell(s["pipeline_sha256"] or "(given as a dictionary)")],
        [cell("distance"), cell(f"{s['space']['distance']}, scale {s['space']['scale']}, "
                                f"missing values: {s['space']['missing']}")],
        [cell("neighbour engine"), cell(_engine_text(s.get("engine", {})))],
        [cell("versions"), cell(", ".join(f"{k} {v}" for k, v in s["versions"].items()))],
    ])
    return f"{main}{timed}\n<h3>Removed, by reason</h3>{reasons}\n<h3>Provenance</h3>{facts}"


def _engine_text(engine: Mapping[str, Any]) -> str:
    """The neighbour engine in words: backend and reason, and how exact it was.

    Examples
    --------
    >>> _engine_text({"backend": "approximate", "reason": "asked for", "exact": False,
    ...               "recall": 0.9912, "recall_sample": 500, "recall_target": 0.99})
    'approximate (asked for); recall 0.991 measured on 500 sampled queries (target 0.99)'
    """
    if "backend" not in engine:
        return "no stage searched for neighbours"
    text = f"{engine['backend']} ({engine['reason']})"
    if engine.get("exact", True):
        return text + "; exact"
    return (text + f"; recall {engine['recall']:.3f} measured on {engine['recall_sample']:,} "
            f"sampled queries (target {engine.get('recall_target', 0.99)})")


def _flow(s: Mapping[str, Any]) -> str:
    from curate.report.plots import flow_plot

    rows = []
    for i, st in enumerate(s["stages"]):
        reasons = ", ".join(f"{k}: {v:,}" for k, v in st["by_reason"].items()) or "nothing"
        rows.append([cell(st["name"]), cell(st["method"]),
                     *(cell(st[k], f"stages.{i}.{k}") for k in ("rows_in", "removed", "kept")),
                     cell(reasons), cell(st["seconds"], f"stages.{i}.seconds")])
    head = ["stage", "method", "rows in", "removed", "passed on", "removed by reason", "time (s)"]
    picture = image(flow_plot(s["stages"]), "rows entering each stage, kept and removed") \
        if s["stages"] else ""
    quarantine = (f'<p class="note">{s["rows_quarantined"]:,} rows failed the schema and left '
                  "before the first stage.</p>" if s["rows_quarantined"] else "")
    approximate = "".join(
        f'<p class="note">Stage {html.escape(str(st["name"]))}: '
        f'{html.escape(str(st["info"].get("note", "partitioned result")))}</p>'
        for st in s["stages"] if st.get("info", {}).get("approximate"))
    approximate += "".join(
        f'<p class="note">Stage {html.escape(str(st["name"]))}: neighbours from the approximate '
        f'engine, recall {st["info"]["engine"]["recall"]:.3f} on '
        f'{st["info"]["engine"]["recall_sample"]:,} sampled queries; an exact run can remove '
        "different rows.</p>"
        for st in s["stages"] if not st.get("info", {}).get("engine", {}).get("exact", True))
    return quarantine + table(head, rows) + approximate + picture


def _classes(s: Mapping[str, Any]) -> str:
    from curate.report.plots import class_balance_plot

    before, after = s["classes_in"], s["classes_kept"]
    rows = [[cell(c), cell(before[c], f"classes_in.{c}"),
             cell(after.get(c, 0), f"classes_kept.{c}"),
             cell(after.get(c, 0) / before[c] if before[c] else float("nan"), percent=True)]
            for c in before]
    return table(["class", "rows in", "rows kept", "share kept"], rows) + \
        image(class_balance_plot(before, after), "rows per class before and after")


def _projection(result: RunResult) -> str:
    from curate.report.plots import projection_plot

    space = result.prepared.space
    pick = sample(space.n, MAX_POINTS, result.summary["seed"])
    matrix = space.matrix[pick]
    if len(pick) < 2 or matrix.shape[1] == 0 or not np.any(matrix.std(axis=0) > 0):
        return '<p class="note">Too few distinct rows to draw a projection.</p>'
    xy, explained = principal_components(matrix, min(2, matrix.shape[1]))
    if xy.shape[1] == 1:
        xy = np.column_stack([xy[:, 0], np.zeros(len(xy))])
    note = (f'<p class="note">Principal components of the rows as curate measures them '
            f"({space.matrix.shape[1]} embedded dimensions, {space.metric} distance); "
            f"{len(pick):,} of {space.n:,} rows shown"
            + (", a seeded uniform sample" if len(pick) < space.n else "") + ".</p>")
    return note + image(projection_plot(xy, reasons_of_valid(result, pick),
                                         explained.tolist()),
                         "two-dimensional projection with removed rows marked")


def _radius(s: Mapping[str, Any]) -> float | None:
    for st in s["stages"]:
        if st["method"] == "near-duplicates" and st["params"].get("radius") is not None:
            return float(st["params"]["radius"])
    return None


def _distances(result: RunResult) -> str:
    from curate.neighbours.search import kneighbors
    from curate.report.plots import distance_plot

    space = result.prepared.space
    if space.n < 2:
        return '<p class="note">Fewer than two rows: no neighbours to measure.</p>'
    pick = sample(space.n, MAX_QUERIES, result.summary["seed"] + 1)
    dist = kneighbors(space, 1, queries=pick)[0][:, 0]
    radius = _radius(result.summary)
    rows = [[cell("rows measured"), cell(len(pick))],
            [cell("median distance"), cell(float(np.median(dist)))],
            [cell("share at distance 0 (exact copies in the features)"),
             cell(float(np.mean(dist == 0)), percent=True)]]
    if radius is not None:
        rows.append([cell("share within the near-copy radius"),
                     cell(float(np.mean(dist <= radius)), percent=True)])
    return (f'<p class="note">Distance from each row to its nearest other row in the input '
            f"(before any stage), {len(pick):,} rows"
            + (" sampled with a seed" if len(pick) < space.n else "") + ".</p>"
            + table([], rows) + image(distance_plot(dist, radius),
                                             "histogram of nearest-neighbour distances"))


# On a numeric target the unusual is in the tails, not in a small class.
REGRESSION_CAUTION = (
    "On a numeric target the tails are the unusual: a genuine extreme value (a pump that ran "
    "far longer than its peers) looks the same as a typing slip to editing and to the "
    "committee. Compare the target before and after above, and keep max_removed_share on.")


def _cautions(regression: bool = False) -> str:
    cautions = (REGRESSION_CAUTION, *CAUTIONS) if regression else CAUTIONS
    return "<ul>" + "".join(f"<li>{marked(c)}</li>" for c in cautions) + "</ul>"


def render_run(result: RunResult, evaluation: Mapping[str, Any] | None = None) -> str:
    """Render the run's report (and the evaluation's, if given) as one self-contained HTML page.

    Examples
    --------
    >>> import polars as pl, tempfile
    >>> from pathlib import Path
    >>> from curate.api import run
    >>> folder = Path(tempfile.mkdtemp())
    >>> pl.DataFrame({"x": [0.0, 0.1, 0.2, 5.0, 5.1, 5.1],
    ...               "y": ["a", "a", "a", "b", "b", "b"]}).write_csv(folder / "t.csv")
    >>> page = render_run(run({"input": {"path": "t.csv", "label": "y"},
    ...                        "stages": [{"method": "exact-duplicates"}]}, base=folder))
    >>> page.startswith("<!doctype html>"), 'id="cautions"' in page
    (True, True)
    """
    s = result.summary
    from curate.report.doubt import doubt_section

    parts = [section("headline", "Headline", _headline(s)),
             section("flow", "Stage by stage", _flow(s))]
    regression = s.get("task", {}).get("task") == "regression"
    if regression:
        parts += [section("target", "The target before and after", target_section(result)),
                  section("residuals", "Targets against their neighbours", residual_section(result))]
    else:
        parts.append(section("classes", "Class balance", _classes(s)))
    doubt = doubt_section(result)
    if doubt:
        parts.append(section("doubt", "Doubt about targets" if regression else
                             "Doubt about labels", doubt))
    parts += [section("projection", "Where the removed rows lie", _projection(result)),
              section("distances", "Nearest-neighbour distances", _distances(result))]
    if evaluation is not None:
        parts.append(section("evaluation", "Evaluation", evaluation_section(evaluation)))
    parts.append(section("cautions", "Cautions", _cautions(regression)))
    title = "curate evaluation report" if evaluation is not None else "curate run report"
    body = "\n".join(parts)
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>{title}</title>
<meta name="viewport" content="width=device-width, initial-scale=1">
<style>{_STYLE}</style>
</head><body>
<h1>{title}</h1>
<p class="note">Pipeline {html.escape(str(s['pipeline']))}, input {html.escape(str(s['input']))}.</p>
{body}
</body></html>
"""
