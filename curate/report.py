"""The self-contained HTML report of a run."""

from __future__ import annotations

import html
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from curate.pipeline import RunResult

__all__ = ["CAUTIONS", "render_run"]

CAUTIONS = (
    "Removing rows can strip genuine rare cases and minority groups: editing treats the unusual "
    "as noise. Check what each stage removed from your smallest classes before you use the set.",
    "Never measure accuracy on a cleaned set: curate only the training part of each split "
    "(`curate evaluate` does this), or the scores will be inflated.",
    "Review the audit before using a curated set in high-stakes settings, and follow the "
    "domain's own rules on what data may be discarded.",
)


def _table(rows: list[list[Any]], head: list[str]) -> str:
    cells = "".join(f"<th>{html.escape(h)}</th>" for h in head)
    body = "".join("<tr>" + "".join(f"<td>{html.escape(str(c))}</td>" for c in row) + "</tr>"
                   for row in rows)
    return f"<table><thead><tr>{cells}</tr></thead><tbody>{body}</tbody></table>"


def render_run(result: RunResult) -> str:
    """Render the run's report as one HTML page that needs no network and no scripts."""
    s = result.summary
    headline = _table([[s["rows_in"], s["rows_kept"], s["rows_removed"], s["rows_quarantined"],
                        f"{s['seconds']:.2f} s", s["seed"]]],
                      ["rows in", "kept", "removed", "quarantined", "run time", "seed"])
    stages = _table([[st["name"], st["method"], st["rows_in"], st["removed"],
                      ", ".join(f"{k}: {v}" for k, v in st["by_reason"].items()),
                      f"{st['seconds']:.2f} s"] for st in s["stages"]],
                    ["stage", "method", "rows in", "removed", "by reason", "time"])
    cautions = "".join(f"<li>{html.escape(c)}</li>" for c in CAUTIONS)
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>curate run report</title>
<style>body{{font-family:sans-serif;max-width:60em;margin:2em auto;padding:0 1em}}
table{{border-collapse:collapse}}td,th{{border:1px solid #bbb;padding:.3em .6em}}</style>
</head><body>
<h1>curate run report</h1>
<section id="headline"><h2>Headline</h2>{headline}
<p>input sha256 {html.escape(s['input_sha256'])}, pipeline sha256 {html.escape(s['pipeline_sha256'])}</p>
</section>
<section id="stages"><h2>Stages</h2>{stages}</section>
<section id="cautions"><h2>Cautions</h2><ul>{cautions}</ul></section>
</body></html>
"""
