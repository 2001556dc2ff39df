"""Copies: exact copies with the same label, and copies whose labels conflict."""

from __future__ import annotations

from typing import Any

import numpy as np

from curate.methods.base import MethodInfo, Param, Removals, Selection
from curate.space import Space

__all__ = ["EXACT", "CONFLICTING", "exact_duplicates", "conflicting_duplicates"]


def _groups(codes: np.ndarray) -> list[np.ndarray]:
    """Positions of each group with two or more rows, in first-seen order, ascending inside."""
    order = np.argsort(codes, kind="stable")
    sorted_codes = codes[order]
    cuts = np.flatnonzero(np.diff(sorted_codes)) + 1
    parts = [p for p in np.split(order, cuts) if len(p) > 1]
    return sorted(parts, key=lambda p: int(p[0]))


def exact_duplicates(space: Space, labels: np.ndarray, *, removable: np.ndarray,
                     seed: int = 0) -> Selection:
    """Remove rows whose feature values and label equal an earlier row's.

    The first row of each group stays (or the first one that may not be
    removed); the others leave with ``kept_as`` pointing to it.

    Examples
    --------
    >>> s = Space.from_matrix([[1.0], [2.0], [1.0], [1.0]])
    >>> sel = exact_duplicates(s, np.array(["a", "a", "a", "b"]), removable=np.ones(4, bool))
    >>> sel.removed.tolist(), sel.kept_as.tolist()
    ([2], [0])
    """
    _, label_codes = np.unique(labels, return_inverse=True)
    ident = space.identity_codes()
    key = ident * (int(label_codes.max(initial=0)) + 1) + label_codes.reshape(-1)
    out = Removals(space.n)
    for group in _groups(key):
        fixed = group[~removable[group]]
        keeper = int(fixed[0]) if len(fixed) else int(group[0])
        for pos in group:
            if pos != keeper and removable[pos]:
                out.add(int(pos), "exact-copy",
                        "same feature values and label as an earlier row, which is kept "
                        f"({len(group)} copies)",
                        neighbours=[keeper], distances=[0.0], kept_as=keeper)
    return out.selection()


def _conflict_group(group: np.ndarray, labels: np.ndarray, policy: str,
                    removable: np.ndarray, out: Removals) -> None:
    values, counts = np.unique(labels[group], return_counts=True)
    top = values[counts == counts.max()]
    keeper = -1
    if policy == "keep-majority" and len(top) == 1:
        keeper = int(group[labels[group] == top[0]][0])
    for pos in group:
        if pos == keeper or not removable[pos]:
            continue
        others = group[group != pos]
        if keeper < 0:
            reason = "conflict-tie" if policy == "keep-majority" else "conflicting-copy"
            detail = (f"same feature values as {len(others)} other rows, labelled "
                      f"{', '.join(repr(str(v)) for v in values)}")
        elif labels[pos] == labels[keeper]:
            reason, detail = "conflict-repeat", "a repeat of the majority-label row it is kept_as"
        else:
            reason = "conflict-outvoted"
            detail = (f"same feature values as {len(others)} other rows; its label "
                      f"{str(labels[pos])!r} is outvoted by {str(top[0])!r}")
        out.add(int(pos), reason, detail, neighbours=others,
                distances=np.zeros(len(others)), kept_as=keeper)


def conflicting_duplicates(space: Space, labels: np.ndarray, *, removable: np.ndarray,
                           seed: int = 0, policy: str = "drop-all") -> Selection:
    """Handle rows with equal feature values but different labels.

    ``drop-all`` removes every row of such a group; ``keep-majority`` keeps the
    first row of the most frequent label (a tie drops all); ``report`` removes
    nothing and lists the groups.

    Examples
    --------
    >>> s = Space.from_matrix([[1.0], [1.0], [2.0], [1.0]])
    >>> y = np.array(["a", "b", "a", "a"])
    >>> conflicting_duplicates(s, y, removable=np.ones(4, bool)).removed.tolist()
    [0, 1, 3]
    >>> sel = conflicting_duplicates(s, y, removable=np.ones(4, bool), policy="keep-majority")
    >>> sel.removed.tolist(), sel.reason
    ([1, 3], ['conflict-outvoted', 'conflict-repeat'])
    """
    ident = space.identity_codes()
    conflicted = [g for g in _groups(ident) if len(np.unique(labels[g])) > 1]
    out = Removals(space.n)
    if policy != "report":
        for group in conflicted:
            _conflict_group(group, labels, policy, removable, out)
    info: dict[str, Any] = {"conflicting_groups": len(conflicted),
                            "rows_in_conflicting_groups": int(sum(len(g) for g in conflicted))}
    return out.selection(info=info, groups=conflicted)


EXACT = MethodInfo(
    key="exact-duplicates", name="exact duplicates", family="duplicates",
    reference="common practice",
    purpose="drop re-sent rows: equal feature values and equal label; keeps the first",
    func=exact_duplicates, params=(), uses_neighbours=False,
    reasons={"exact-copy": "same feature values and label as an earlier, kept row"},
)

CONFLICTING = MethodInfo(
    key="conflicting-duplicates", name="conflicting-label duplicates", family="duplicates",
    reference="common practice",
    purpose="rows with equal feature values but different labels: drop, resolve by majority, "
            "or report",
    func=conflicting_duplicates, uses_neighbours=False,
    params=(Param("policy", str, "drop-all", "what to do with a conflicting group",
                  choices=("drop-all", "keep-majority", "report")),),
    reasons={
        "conflicting-copy": "same feature values as rows with another label (drop-all)",
        "conflict-tie": "conflicting group with no single most frequent label (keep-majority)",
        "conflict-outvoted": "its label is not the group's most frequent one (keep-majority)",
        "conflict-repeat": "a further copy of the kept majority-label row (keep-majority)",
    },
)
