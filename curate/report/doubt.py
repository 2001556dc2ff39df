"""The report's section on doubt about labels, when a label-noise stage scored the rows.

The doubt of a row is one minus the out-of-fold probability of its own label
(see :mod:`curate.methods.noise`); its spread comes from ``summary.json``
(``doubt``), and each number carries its key path as the rest of the report does.
"""

from __future__ import annotations

import html
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np

from curate.report.cells import cell, image, table

if TYPE_CHECKING:
    from curate.pipeline.records import RunResult

__all__ = ["doubt_section"]


def _fates(result: RunResult) -> dict[str, np.ndarray]:
    """Doubt of the scored rows, split by their fate: removed (by any stage), flagged by a
    label-noise stage but kept, or kept."""
    doubt = result.scores["doubt"]
    ids = result.prepared.ids
    fate = np.full(len(doubt), "kept", dtype=object)
    if result.flagged is not None and result.flagged.height:
        fate[np.flatnonzero(ids.is_in(result.flagged["row_id"].implode()).to_numpy())] = \
            "flagged, kept"
    fate[np.flatnonzero(ids.is_in(result.audit["row_id"].implode()).to_numpy())] = "removed"
    scored = np.isfinite(doubt)
    return {name: doubt[scored & (fate == name)] for name in ("kept", "flagged, kept", "removed")}


def doubt_section(result: RunResult) -> str:
    """HTML for the doubt section; empty when no stage scored the rows' doubt."""
    s: Mapping[str, Any] = result.summary
    if "doubt" not in s or "doubt" not in result.scores:
        return ""
    from curate.report.plots import doubt_plot

    d = s["doubt"]
    rows = [[cell("rows scored"), cell(d["rows_scored"], "doubt.rows_scored")],
            [cell("mean doubt"), cell(d["mean"], "doubt.mean")],
            [cell("median, 90th, 99th percentile"),
             cell(f"{d['median']:.3f}, {d['q90']:.3f}, {d['q99']:.3f}"
                  if d["median"] is not None else "-")]]
    rows += [[cell(f"rows with doubt at least {level}"), cell(n, f"doubt.at_least.{level}")]
             for level, n in d["at_least"].items()]
    regression = s.get("task", {}).get("task") == "regression"
    note = ('<p class="note">Doubt = 1 - the out-of-fold probability of the row\'s own label, '
            "averaged over the committee; each model judged rows it was not fitted on. It is "
            "statistical evidence, not proof: in classes that overlap by nature, correct rows "
            "get high doubt too. Review relabelling wherever people are affected.</p>")
    if regression:
        note = ('<p class="note">Doubt = how far the row\'s target lies from the committee\'s '
                "mean out-of-fold prediction, in standard deviations of the target; each model "
                "judged rows it was not fitted on. It is statistical evidence, not proof: a "
                "genuine extreme value the features do not explain gets high doubt too. Review "
                "suggested values before you train on them.</p>")
    return (note + table(["", ""], rows)
            + image(doubt_plot(_fates(result), regression),
                    "histogram of doubt, kept, flagged and removed rows apart")
            + "".join(f'<p class="note">{html.escape(t)}</p>' for t in _actions(s)))


def _actions(s: Mapping[str, Any]) -> list[str]:
    """One sentence per label-noise stage that kept the rows it flagged."""
    return [f"Stage {st['name']!r} ({st['method']}) flagged {st['flagged_kept']:,} rows and "
            + ("kept them with a suggested label or value (suggested_label in kept.parquet)."
               if st["info"].get("action") == "relabel" else "only reported them.")
            + " They are listed in flagged.parquet."
            for st in s["stages"] if "flagged_kept" in st]
