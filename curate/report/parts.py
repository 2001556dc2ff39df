"""The pieces every report section is built from: cells that carry their source, tables,
sections, pictures, seeded samples, and the tables an evaluation's detection counts fill.

Every number that also lives in ``summary.json`` (or ``evaluation.json``) is printed
from that same dictionary and carries its key path in ``data-key`` and its exact
value in ``data-value``, so that a test can check that the page and the files agree.
"""

from __future__ import annotations

import html
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
import polars as pl

if TYPE_CHECKING:
    from curate.pipeline.records import RunResult

__all__ = ["MAX_POINTS", "MAX_QUERIES", "cell", "detection_table", "image", "known_faults",
           "over_limit_notes", "reasons_of_valid", "sample", "section", "table"]

# Points in the projection and queries in the distance histogram; a sample beyond that.
MAX_POINTS = 4000
MAX_QUERIES = 2000


def _text(value: Any) -> str:
    if isinstance(value, bool) or value is None:
        return "yes" if value is True else "no" if value is False else "-"
    if isinstance(value, float):
        return "-" if np.isnan(value) else f"{value:.4g}" if abs(value) < 1e4 else f"{value:,.0f}"
    if isinstance(value, int):
        return f"{value:,}"
    return str(value)


def cell(value: Any, key: str | None = None) -> str:
    """One table cell; with ``key``, the cell names its source and holds the exact value.

    Examples
    --------
    >>> cell(0.123456, "results.0.accuracy")
    '<td class="n" data-key="results.0.accuracy" data-value="0.123456">0.1235</td>'
    >>> cell("enn")
    '<td>enn</td>'
    """
    number = isinstance(value, int | float) and not isinstance(value, bool)
    attrs = ' class="n"' if number else ""
    if key is not None:
        attrs += f' data-key="{html.escape(key)}" data-value="{html.escape(str(value))}"'
    return f"<td{attrs}>{html.escape(_text(value))}</td>"


def table(head: Sequence[str], rows: Sequence[Sequence[str]]) -> str:
    """An HTML table from header texts and rows of ready cells (see :func:`cell`).

    Examples
    --------
    >>> table(["a"], [[cell(1)]])
    '<table><thead><tr><th>a</th></tr></thead><tbody><tr><td class="n">1</td></tr></tbody></table>'
    """
    top = "".join(f"<th>{html.escape(h)}</th>" for h in head)
    body = "".join("<tr>" + "".join(r) + "</tr>" for r in rows)
    return f"<table><thead><tr>{top}</tr></thead><tbody>{body}</tbody></table>"


def section(ident: str, title: str, body: str) -> str:
    """One titled section of the page.

    Examples
    --------
    >>> section("flow", "Stage by stage", "<p>x</p>").startswith('<section id="flow"><h2>Stage')
    True
    """
    return f'<section id="{ident}"><h2>{html.escape(title)}</h2>\n{body}\n</section>'


def image(uri: str, alt: str) -> str:
    """A picture given as a data URI.

    Examples
    --------
    >>> image("data:image/png;base64,AA==", "a plot")
    '<img src="data:image/png;base64,AA==" alt="a plot">'
    """
    return f'<img src="{uri}" alt="{html.escape(alt)}">'


def reasons_of_valid(result: RunResult) -> np.ndarray:
    """Removal reason of each row of the space (valid rows), empty text for kept rows."""
    prep = result.prepared
    ids = prep.ids.gather(prep.valid_positions)
    frame = pl.DataFrame({"row_id": ids}).join(result.audit.select("row_id", "reason"),
                                               on="row_id", how="left", maintain_order="left")
    return frame["reason"].fill_null("").to_numpy().astype(str)


def sample(n: int, size: int, seed: int) -> np.ndarray:
    """Every position when there are at most ``size``, else a seeded sorted sample of them.

    Examples
    --------
    >>> sample(3, 5, 0).tolist(), len(sample(100, 5, 0))
    ([0, 1, 2], 5)
    """
    if n <= size:
        return np.arange(n)
    return np.sort(np.random.default_rng(seed).choice(n, size=size, replace=False))


def detection_table(block: Mapping[str, Any], key: str) -> str:
    """Removed rows, faulty ones among them, precision and recall: per stage and in all."""
    head = ["stage", "removed", "of them faulty", "precision", "recall"]
    rows = [[cell(st["stage"]), *(cell(st[m], f"{key}.stages.{i}.{m}")
                                  for m in ("removed", "found", "precision", "recall"))]
            for i, st in enumerate(block["stages"])]
    every = block["all_stages"]
    rows.append([cell("all stages"), *(cell(every[m], f"{key}.all_stages.{m}")
                                       for m in ("removed", "found", "precision", "recall"))])
    return table(head, rows)


def over_limit_notes(e: Mapping[str, Any]) -> list[str]:
    """One sentence per stage that went over its max_removed_share in some folds (shared by
    the report and the command line's text)."""
    total = e["folds"] * e["repeats"]
    what = "of its rows" if e.get("task") == "regression" else "of a class"
    return [f"stage {name!r} removed more {what} than its max_removed_share in {n} of "
            f"{total} folds: a run on such data stops there; the numbers show what it removed "
            "anyway" for name, n in (e.get("over_limit") or {}).items()]


def known_faults(e: Mapping[str, Any]) -> str:
    """The evaluation's scores against a table of known faulty rows, when one was given."""
    if not e.get("truth"):
        return ""
    t = e["truth"]
    kinds = ", ".join(f"{k}: {v:,}" for k, v in t["faults"].items())
    return (f"<h3>Known faults</h3><p>Rows marked faulty in {html.escape(str(t['file']))} "
            f"({html.escape(kinds)} among the evaluated rows; each counts in every fold "
            "whose training part holds it). Recall per stage is against all faulty "
            "rows, so the stages' recalls add up.</p>" + detection_table(t, "evaluation.truth")
            + table(["kind of fault", "in training parts", "removed", "recall"],
                    [[cell(kind), *(cell(v[m], f"evaluation.truth.by_fault.{kind}.{m}")
                                    for m in ("faulty", "found", "recall"))]
                     for kind, v in t["by_fault"].items()]))
