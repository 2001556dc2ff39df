"""The report's pictures, drawn with matplotlib off screen and embedded as base64 PNG.

Each function takes plain numbers (never a run object) and returns a
``data:image/png;base64,...`` URI for an ``<img>`` tag, so the report needs no
network, no files beside it and no scripts. Figures are built on
:class:`matplotlib.figure.Figure` with the Agg canvas directly, which leaves
pyplot's global figure registry untouched.
"""

from __future__ import annotations

import base64
import io
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

__all__ = ["class_balance_plot", "distance_plot", "doubt_plot", "flow_plot", "projection_plot",
           "score_plot"]

_KEPT = "#9aa5b1"
_KEPT_DOT = "#2b4c7e"  # kept rows in the projection: dark, so they show under removed markers
_COLOURS = ("#d62728", "#1f77b4", "#ff7f0e", "#2ca02c", "#9467bd", "#8c564b", "#e377c2",
            "#17becf", "#bcbd22", "#7f7f7f")
# Removed rows in the projection: none of them close to the kept rows' dark blue.
_REMOVED = ("#d62728", "#ff7f0e", "#2ca02c", "#9467bd", "#e377c2", "#8c564b", "#17becf",
            "#bcbd22", "#7f7f7f")


def _figure(width: float = 7.0, height: float = 3.6) -> Figure:
    fig = Figure(figsize=(width, height), dpi=100, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def _uri(fig: Figure) -> str:
    buffer = io.BytesIO()
    # No creation date in the metadata, so the same run gives the same bytes.
    fig.savefig(buffer, format="png", metadata={"Software": None})
    return "data:image/png;base64," + base64.b64encode(buffer.getvalue()).decode("ascii")


def _colour(reasons: Sequence[str]) -> dict[str, str]:
    return {r: _COLOURS[i % len(_COLOURS)] for i, r in enumerate(reasons)}


def flow_plot(stages: Sequence[Mapping[str, Any]]) -> str:
    """Rows entering each stage, split into rows passed on and rows removed by reason.

    ``stages`` are the summary's stage records (``name``, ``rows_in``,
    ``kept``, ``by_reason``).

    Examples
    --------
    >>> flow_plot([{"name": "enn", "rows_in": 10, "kept": 8, "by_reason": {"vote": 2}}])[:22]
    'data:image/png;base64,'
    """
    fig = _figure(8.0, 1.0 + 0.45 * max(2, len(stages)))
    ax = fig.add_subplot()
    reasons = sorted({r for st in stages for r in st["by_reason"]})
    colour = _colour(reasons)
    names = [str(st["name"]) for st in stages][::-1]
    rows = list(stages)[::-1]
    ax.barh(names, [st["kept"] for st in rows], color=_KEPT, label="passed on")
    left = np.array([st["kept"] for st in rows], dtype=float)
    for reason in reasons:
        width = np.array([st["by_reason"].get(reason, 0) for st in rows], dtype=float)
        ax.barh(names, width, left=left, color=colour[reason], label=f"removed: {reason}")
        left += width
    ax.set_xlabel("rows entering the stage")
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize="small", frameon=False)
    return _uri(fig)


def class_balance_plot(before: Mapping[str, int], after: Mapping[str, int]) -> str:
    """Rows per class in the input and in the kept set, side by side.

    Examples
    --------
    >>> class_balance_plot({"a": 5, "b": 2}, {"a": 3, "b": 2}).startswith("data:image/png")
    True
    """
    classes = list(before)
    fig = _figure(7.0, 3.0)
    ax = fig.add_subplot()
    x = np.arange(len(classes))
    ax.bar(x - 0.2, [before[c] for c in classes], width=0.4, color=_KEPT, label="input")
    ax.bar(x + 0.2, [after.get(c, 0) for c in classes], width=0.4, color=_COLOURS[1],
           label="kept")
    ax.set_xticks(x, classes, rotation=20 if len(classes) > 4 else 0)
    ax.set_ylabel("rows")
    ax.legend(frameon=False)
    return _uri(fig)


def projection_plot(xy: np.ndarray, reasons: np.ndarray, explained: Sequence[float]) -> str:
    """Scatter of a 2-D projection: kept rows as dots, removed rows on top by reason.

    ``reasons`` holds one text per point, empty for kept rows; ``explained``
    the share of variance of each axis. Kept rows are drawn first as solid
    dots in a colour of their own, removed rows as hollow markers over them
    (so both stay visible where they crowd), and the legend counts each group.

    Examples
    --------
    >>> projection_plot(np.zeros((3, 2)), np.array(["", "vote", ""]), [0.6, 0.3])[:10]
    'data:image'
    """
    fig = _figure(9.0, 5.2)
    ax = fig.add_subplot()
    kept = reasons == ""
    # Kept rows: large solid dots with a white rim. Removed rows: small thin rings on top,
    # see-through, so that a kept dot still shows where removed rows crowd around it.
    ax.scatter(xy[kept, 0], xy[kept, 1], s=30, c=_KEPT_DOT, edgecolors="white", linewidths=0.5,
               label=f"kept ({int(kept.sum()):,})", zorder=2)
    names = sorted(set(reasons[~kept].tolist()))
    colour = {r: _REMOVED[i % len(_REMOVED)] for i, r in enumerate(names)}
    for reason in names:
        at = reasons == reason
        if reason.startswith("flagged"):  # kept rows a label-noise stage flagged: crosses
            ax.scatter(xy[at, 0], xy[at, 1], s=14, c=colour[reason], marker="x", linewidths=0.8,
                       label=f"{reason} ({int(at.sum()):,})", zorder=4)
            continue
        ax.scatter(xy[at, 0], xy[at, 1], s=9, facecolors="none", edgecolors=colour[reason],
                   linewidths=0.6, alpha=0.6, label=f"removed: {reason} ({int(at.sum()):,})",
                   zorder=3)
    ax.set_xlabel(f"first component ({explained[0]:.0%} of variance)")
    ax.set_ylabel(f"second component ({explained[1]:.0%} of variance)"
                  if len(explained) > 1 else "(one dimension only)")
    legend = ax.legend(fontsize="small", frameon=False, markerscale=1.5, loc="upper left",
                       bbox_to_anchor=(1.01, 1.0), title="rows shown", title_fontsize="small")
    for handle in legend.legend_handles:
        if handle is not None:
            handle.set_alpha(1.0)
    return _uri(fig)


def doubt_plot(groups: Mapping[str, np.ndarray], regression: bool = False) -> str:
    """Stacked histogram of the doubt score, one colour per group of rows.

    On [0, 1] for classes; for a numeric target (a residual in standard
    deviations) from 0 to the largest score, at most 10.

    Examples
    --------
    >>> doubt_plot({"kept": np.array([0.1, 0.2]), "removed": np.array([0.9])})[:5]
    'data:'
    """
    fig = _figure(7.0, 3.0)
    ax = fig.add_subplot()
    names = [name for name, values in groups.items() if len(values)]
    colours = [_KEPT if name == "kept" else _COLOURS[i % len(_COLOURS)]
               for i, name in enumerate(names)]
    if names:
        top = 1.0
        if regression:
            top = min(10.0, max(1.0, max(float(groups[n].max()) for n in names)))
        ax.hist([np.minimum(groups[n], top) for n in names],
                bins=np.linspace(0, top, 41).tolist(), stacked=True, color=colours, label=names)
        ax.legend(frameon=False)
    ax.set_xlabel("doubt (|target - out-of-fold prediction| in standard deviations; 10 and "
                  "more at the right edge)" if regression else
                  "doubt (1 - out-of-fold probability of the row's own label)")
    ax.set_ylabel("rows")
    return _uri(fig)


def distance_plot(distances: np.ndarray, radius: float | None = None) -> str:
    """Histogram of nearest-neighbour distances, with the near-copy radius marked if set.

    Examples
    --------
    >>> distance_plot(np.array([0.0, 0.1, 0.2, 0.2]), radius=0.05)[:5]
    'data:'
    """
    fig = _figure(7.0, 3.0)
    ax = fig.add_subplot()
    finite = distances[np.isfinite(distances)]
    top = float(finite.max()) if len(finite) else 1.0
    bins = np.linspace(0.0, top if top > 0 else 1.0, 41).tolist()
    ax.hist(finite, bins=bins, color=_COLOURS[1])
    if radius is not None:
        ax.axvline(radius, color=_COLOURS[0], linestyle="--", label=f"near-copy radius {radius:g}")
        ax.legend(frameon=False)
    ax.set_xlabel("distance to the nearest other row")
    ax.set_ylabel("rows")
    return _uri(fig)


def score_plot(results: Sequence[Mapping[str, Any]], metric: str, label: str,
               baseline: float | None = None, baseline_label: str = "baseline") -> str:
    """Mean ``metric`` (with one standard deviation) against k, with and without curation.

    ``results`` are the evaluation records; only those with a ``k`` are drawn,
    with ``{metric}_std`` as the error bar. ``baseline`` is a dotted line.

    Examples
    --------
    >>> score_plot([{"k": 1, "curated": False, "rmse": 2.0, "rmse_std": 0.1},
    ...             {"k": 1, "curated": True, "rmse": 1.8, "rmse_std": 0.1}], "rmse", "RMSE")[:5]
    'data:'
    """
    fig = _figure(7.0, 3.4)
    ax = fig.add_subplot()
    for curated, colour, name in ((False, _KEPT, "without curation"),
                                  (True, _COLOURS[1], "with curation")):
        rows = sorted((r for r in results if r.get("k") is not None and r["curated"] == curated),
                      key=lambda r: r["k"])
        if rows:
            ax.errorbar([r["k"] for r in rows], [r[metric] for r in rows],
                        yerr=[r[f"{metric}_std"] for r in rows], marker="o", capsize=3,
                        color=colour, label=name)
    if baseline is not None:
        ax.axhline(baseline, color="#555555", linestyle=":", label=baseline_label)
    ax.set_xlabel("k (neighbours)")
    ax.set_ylabel(label)
    ax.legend(frameon=False)
    return _uri(fig)
