"""The report's pictures for numeric targets: the target before and after, and residuals.

Like :mod:`curate.plots`, each function takes plain numbers and returns a
``data:image/png;base64,...`` URI drawn off screen.
"""

from __future__ import annotations

import numpy as np

from curate.report.plots import _COLOURS, _KEPT, _colour, _figure, _uri

__all__ = ["residual_plot", "target_plot"]


def target_plot(before: np.ndarray, after: np.ndarray, unit: str = "") -> str:
    """Histograms of the target in the input and in the kept rows, on the same bins.

    Examples
    --------
    >>> target_plot(np.array([1.0, 2.0, 2.5, 9.0]), np.array([1.0, 2.0, 2.5]), "h")[:5]
    'data:'
    """
    fig = _figure(7.0, 3.2)
    ax = fig.add_subplot()
    values = np.asarray(before, dtype=np.float64)
    low, high = (float(values.min()), float(values.max())) if len(values) else (0.0, 1.0)
    bins = np.linspace(low, high if high > low else low + 1.0, 41).tolist()
    ax.hist(values, bins=bins, color=_KEPT, label="input")
    ax.hist(np.asarray(after, dtype=np.float64), bins=bins, histtype="step", linewidth=1.6,
            color=_COLOURS[1], label="kept")
    ax.set_xlabel("target" + (f" ({unit})" if unit else ""))
    ax.set_ylabel("rows")
    ax.legend(frameon=False)
    return _uri(fig)


def residual_plot(predicted: np.ndarray, residual: np.ndarray, reasons: np.ndarray,
                  unit: str = "") -> str:
    """Residual (target minus its neighbours' mean) against that mean; removed rows by reason.

    ``reasons`` holds one text per point, empty for kept rows.

    Examples
    --------
    >>> residual_plot(np.array([1.0, 2.0]), np.array([0.1, 5.0]), np.array(["", "target-off"]))[:5]
    'data:'
    """
    fig = _figure(7.0, 4.2)
    ax = fig.add_subplot()
    kept = reasons == ""
    ax.scatter(predicted[kept], residual[kept], s=5, c=_KEPT, alpha=0.5, linewidths=0,
               label="kept")
    names = sorted(set(reasons[~kept].tolist()))
    colour = _colour(names)
    for reason in names:
        at = reasons == reason
        ax.scatter(predicted[at], residual[at], s=12, c=colour[reason], marker="x",
                   linewidths=0.8, label=f"removed: {reason}")
    ax.axhline(0.0, color="#555555", linewidth=0.8)
    suffix = f" ({unit})" if unit else ""
    ax.set_xlabel("mean target of the row's nearest neighbours" + suffix)
    ax.set_ylabel("target minus that mean" + suffix)
    ax.legend(fontsize="small", frameon=False, markerscale=1.5)
    return _uri(fig)
