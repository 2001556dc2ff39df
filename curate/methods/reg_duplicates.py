"""Conflicting copies for numeric targets: equal feature values, targets too far apart.

Rows whose feature values are equal form a group; the group conflicts when
its targets differ by more than a tolerance (the largest minus the smallest
target), given in target units (``tolerance``) or in standard deviations of
the whole target (``relative_tolerance``). Equal rows whose targets agree
within the tolerance are not conflicts (``exact-duplicates`` removes true
copies). A conflicting group is dropped whole (``drop-all``), reduced to its
median row (``keep-median``: the row whose target is nearest the group's
median, the lower position on a tie; the others leave with ``kept_as``
pointing to it), or only reported (``report``).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from curate.errors import UsageError
from curate.methods._copies import equal_groups
from curate.methods._targets import check_targets, target_spread, value_writer
from curate.methods.base import MethodInfo, Selection, SelectionBuilder
from curate.settings import Param
from curate.space.points import Space

__all__ = ["REG_CONFLICTING", "regression_conflicts"]


def _tolerance(y: np.ndarray, tolerance: float, relative_tolerance: float | None) -> float:
    if relative_tolerance is None:
        return float(tolerance)
    if tolerance:
        raise UsageError("conflicting-duplicates: give tolerance or relative_tolerance, not both",
                         hint="keep tolerance (target units) or relative_tolerance (standard "
                              "deviations of the target)")
    return float(relative_tolerance) * target_spread(y)


def _median_row(group: np.ndarray, y: np.ndarray) -> int:
    """The group's row whose target is nearest the group's median (ties: lower position)."""
    off = np.abs(y[group] - np.median(y[group]))
    return int(group[np.lexsort((group, off))[0]])


def regression_conflicts(space: Space, targets: np.ndarray, *, removable: np.ndarray,
                         seed: int = 0, policy: str = "drop-all", tolerance: float = 0.0,
                         relative_tolerance: float | None = None, unit: str = "") -> Selection:
    """Handle rows with equal feature values whose targets differ by more than the tolerance.

    Examples
    --------
    >>> s = Space.from_matrix([[1.0], [1.0], [2.0], [1.0], [2.0]])
    >>> y = np.array([10.0, 30.0, 5.0, 12.0, 5.2])
    >>> sel = regression_conflicts(s, y, removable=np.ones(5, bool), tolerance=1.0, unit="h")
    >>> sel.removed.tolist(), sel.info["conflicting_groups"]
    ([0, 1, 3], 1)
    >>> sel = regression_conflicts(s, y, removable=np.ones(5, bool), policy="keep-median",
    ...                            tolerance=1.0, unit="h")
    >>> sel.removed.tolist(), sel.kept_as.tolist()
    ([0, 1], [3, 3])
    >>> sel.detail[1]
    'same feature values as 2 other rows, targets from 10.0 h to 30.0 h (more than the \
tolerance 1.0 h apart); the row with the target nearest their median 12.0 h is kept'
    """
    y = check_targets(targets, where="conflicting-duplicates")
    limit = _tolerance(y, tolerance, relative_tolerance)
    write = value_writer(y, unit)
    conflicted = [g for g in equal_groups(space.identity_codes()) if np.ptp(y[g]) > limit]
    out = SelectionBuilder(space.n)
    for group in conflicted if policy != "report" else []:
        keeper = _median_row(group, y) if policy == "keep-median" else -1
        others = "1 other row" if len(group) == 2 else f"{len(group) - 1} other rows"
        said = (f"same feature values as {others}, targets from "
                f"{write(y[group].min())} to {write(y[group].max())} (more than the tolerance "
                f"{write(limit)} apart)")
        if keeper >= 0:
            said += f"; the row with the target nearest their median {write(y[keeper])} is kept"
        for pos in group:
            if pos == keeper or not removable[pos]:
                continue
            others = group[group != pos]
            out.add(int(pos), "conflicting-targets" if keeper < 0 else "off-median", said,
                    neighbours=others, distances=np.zeros(len(others)), kept_as=keeper)
    info: dict[str, Any] = {"conflicting_groups": len(conflicted), "tolerance": limit,
                            "rows_in_conflicting_groups": int(sum(len(g) for g in conflicted))}
    return out.selection(info=info, groups=conflicted)


REG_CONFLICTING = MethodInfo(
    key="conflicting-duplicates", name="conflicting-target duplicates", family="duplicates",
    reference="common practice",
    purpose="rows with equal feature values whose targets differ by more than a tolerance: drop "
            "them, keep the median one, or report",
    func=regression_conflicts, uses_neighbours=False, catches=("conflict",),
    params=(Param("policy", str, "drop-all", "what to do with a conflicting group",
                  choices=("drop-all", "keep-median", "report")),
            Param("tolerance", float, 0.0, "targets of equal rows may differ by this much, in "
                  "target units", low=0.0),
            Param("relative_tolerance", float, None, "the tolerance in standard deviations of "
                  "the target instead", low=0.0),
            Param("unit", str, "", "unit of the target, written after its values in the audit "
                  "(such as \"h\")")),
    reasons={"conflicting-targets": "same feature values as rows whose targets differ by more "
                                    "than the tolerance (drop-all)",
             "off-median": "in a conflicting group, not the row nearest the group's median "
                           "target (keep-median)"},
)
