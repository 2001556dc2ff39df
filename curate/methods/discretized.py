"""Instance selection for regression by discretisation (Arnaiz-González et al. 2016).

The target is cut into ``bins`` equal-frequency bins (its quantiles), each
row takes its bin as a class, and any classification method runs on those
classes: ENN then removes rows whose target falls in another bin than their
neighbours' targets, CNN keeps the rows a 1-NN lookup needs to tell the bins
apart, and so on. The bins are stated in every audit sentence (the class
names are the bins' ranges in target units) and in ``Selection.info``.

The method table is built by :func:`make_discretized` from the classification
methods it may call, so this module never imports the method registry.
"""

from __future__ import annotations

from collections.abc import Mapping
from functools import partial
from typing import Any

import numpy as np

from curate.errors import UsageError
from curate.methods._targets import check_targets, quantile_bins, value_writer
from curate.methods.base import MethodInfo, Selection
from curate.settings import Param, check_params
from curate.space.points import Space

__all__ = ["bin_names", "discretized", "make_discretized"]


def bin_names(codes: np.ndarray, edges: np.ndarray, write: Any) -> np.ndarray:
    """One class name per row: its bin, numbered from 1, with the bin's range in target units.

    Examples
    --------
    >>> names = bin_names(np.array([0, 1]), np.array([0.0, 5.0, 9.0]), lambda v: f"{v:.0f} h")
    >>> names.tolist()
    ['bin 1 of 2 (0 h to 5 h)', 'bin 2 of 2 (5 h to 9 h)']
    """
    count = len(edges) - 1
    table = np.array([f"bin {b + 1} of {count} ({write(edges[b])} to {write(edges[b + 1])})"
                      for b in range(count)])
    return table[codes]


def discretized(space: Space, targets: np.ndarray, *, removable: np.ndarray, seed: int = 0,
                bins: int = 5, method: str = "enn", params: dict[str, Any] | None = None,
                unit: str = "", registry: Mapping[str, MethodInfo]) -> Selection:
    """Bin the target by its quantiles and run the classification ``method`` on the bins.

    ``params`` are the inner method's parameters, checked against its table.
    Each removed row's sentence starts with its target and its bin, then
    gives the inner method's reason in terms of bins. ``info`` holds the bin
    edges, the rows per bin and the inner method's own facts.

    Examples
    --------
    >>> from curate.methods.editing import ENN
    >>> s = Space.from_matrix([[0.0], [0.1], [0.2], [0.3], [5.0], [5.1], [5.2], [5.3]])
    >>> y = np.array([1.0, 1.2, 9.5, 1.1, 9.1, 9.3, 9.2, 1.3])
    >>> sel = discretized(s, y, removable=np.ones(8, bool), bins=2, registry={"enn": ENN})
    >>> sel.removed.tolist(), np.round(sel.info["bins"]["edges"], 2).tolist()
    ([2, 7], [1.0, 5.2, 9.5])
    >>> sel.detail[0]
    "its target 9.5 is in bin 2 of 2 (5.2 to 9.5): 3 of its 3 nearest neighbours are labelled \
'bin 1 of 2 (1.0 to 5.2)', none 'bin 2 of 2 (5.2 to 9.5)' (its own label)"
    """
    y = check_targets(targets, where="discretized")
    if method not in registry:
        raise UsageError(f"discretized: method {method!r} cannot run on target bins",
                         hint=f"use one of: {', '.join(sorted(registry))}")
    inner = registry[method]
    inner_params = check_params(inner, dict(params or {}), where=f"discretized ({method})")
    codes, edges = quantile_bins(y, bins)
    write = value_writer(y, unit)
    names = bin_names(codes, edges, write)
    sel = inner.func(space, names, removable=removable, seed=seed, **inner_params)
    sel.detail = [f"its target {write(y[i])} is in {names[i]}: {detail}"
                  for i, detail in zip(sel.removed, sel.detail, strict=True)]
    sel.info = {"bins": {"asked": bins, "made": len(edges) - 1,
                         "edges": [float(e) for e in edges],
                         "rows": np.bincount(codes, minlength=len(edges) - 1).tolist()},
                "method": method, "method_info": sel.info}
    return sel


def make_discretized(registry: Mapping[str, MethodInfo]) -> MethodInfo:
    """The ``discretized`` method's table, able to call the classification methods in ``registry``.

    Examples
    --------
    >>> from curate.methods.editing import ENN
    >>> make_discretized({"enn": ENN}).param("method").choices
    ('enn',)
    """
    methods = dict(registry)
    func = partial(discretized, registry=methods)
    func.__doc__ = discretized.__doc__  # type: ignore[attr-defined]
    return MethodInfo(
        key="discretized", name="instance selection for regression by discretisation",
        family="editing", reference="Arnaiz-González et al. 2016",
        purpose="cut the target into equal-frequency bins and run a classification method on "
                "the bins (the audit states the bins)",
        func=func, catches=("outlier",),
        params=(Param("bins", int, 5, "equal-frequency bins of the target (fewer when many "
                      "targets are equal)", low=2),
                Param("method", str, "enn", "the classification method that runs on the bins",
                      choices=tuple(sorted(methods))),
                Param("params", dict, None, "parameters of that method, as a table such as "
                      "{ k = 5 }"),
                Param("unit", str, "", "unit of the target, written after its values in the "
                      "audit (such as \"h\")")),
        reasons={reason: f"{why}, with target bins as classes"
                 for info in methods.values() for reason, why in info.reasons.items()},
    )
