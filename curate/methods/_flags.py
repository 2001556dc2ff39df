"""What a label-noise stage decided about each flagged row, and how it says so.

A label-noise stage flags rows; its ``action`` decides what happens to them:
``remove`` (they leave, like any other stage's removals), ``relabel`` (they
stay, and the label the committee votes for is suggested beside the input's
own, which is never overwritten) or ``report`` (they stay; the records only
say what the stage found). Every flagged row gets one record either way.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from curate.methods.base import Selection, SelectionBuilder

__all__ = ["ACTIONS", "Flags", "describe_vote", "share"]

ACTIONS = ("remove", "relabel", "report")


class Flags:
    """Collects one record and one suggested label per flagged row, then builds the selection.

    Examples
    --------
    >>> f = Flags(3, np.array(["a", "b"]))
    >>> f.add(1, 0, "flag", "a plain sentence")
    >>> sel = f.selection("relabel", {})
    >>> sel.removed.tolist(), sel.flagged.removed.tolist(), sel.suggested.tolist()
    ([], [1], [None, 'a', None])
    """

    def __init__(self, n: int, names: np.ndarray) -> None:
        self.records = SelectionBuilder(n)
        self.names = names
        self.suggested = np.full(n, None, dtype=object)

    def __len__(self) -> int:
        return len(self.records)

    def add(self, position: int, suggestion: int, reason: str, detail: str, *,
            neighbours: Sequence[int] | np.ndarray = (),
            distances: Sequence[float] | np.ndarray = (), step: int = 1) -> None:
        """Record a flagged row, the class code it should carry, and its evidence."""
        self.records.add(position, reason, detail, neighbours=neighbours, distances=distances,
                         step=step)
        label = self.names[suggestion]
        self.suggested[position] = label.item() if isinstance(label, np.generic) else label

    def add_value(self, position: int, value: float, reason: str, detail: str, *,
                  neighbours: Sequence[int] | np.ndarray = (),
                  distances: Sequence[float] | np.ndarray = ()) -> None:
        """Record a flagged row of a numeric target and the value suggested for it."""
        self.records.add(position, reason, detail, neighbours=neighbours, distances=distances)
        self.suggested[position] = float(value)

    def selection(self, action: str, info: dict[str, Any],
                  scores: dict[str, np.ndarray] | None = None) -> Selection:
        """Build the stage's selection for ``action``."""
        found = self.records.selection(info=dict(info, action=action, flagged=len(self)))
        if action == "remove":
            base, flagged = found, None
        else:
            base = SelectionBuilder(self.records.n).selection(info=found.info)
            flagged = found
        base.flagged, base.suggested, base.action = flagged, self.suggested, action
        base.scores.update(scores or {})
        return base


def share(value: float) -> str:
    """A probability in words, two decimals.

    Examples
    --------
    >>> share(0.0412)
    '0.04'
    """
    return f"{value:.2f}"


def describe_vote(votes: np.ndarray, names: np.ndarray, own: int, voters: int,
                  who: str) -> str:
    """Say how ``voters`` models voted, most votes first, the row's own label last.

    Examples
    --------
    >>> describe_vote(np.array([3, 0]), np.array(["healthy", "seal-leak"]), 1, 3,
    ...               "the committee votes")
    "the committee votes 3 of 3 for 'healthy'"
    >>> describe_vote(np.array([1, 2, 1]), np.array(["a", "b", "c"]), 0, 4, "4 models vote")
    "4 models vote 2 of 4 for 'b', 1 for 'c', 1 for its own label"
    """
    others = sorted((c for c in np.flatnonzero(votes) if c != own),
                    key=lambda c: (-votes[c], c))
    parts = [f"{votes[c]} of {voters} for {str(names[c])!r}" if i == 0 else
             f"{votes[c]} for {str(names[c])!r}" for i, c in enumerate(others)]
    if votes[own]:
        parts.append(f"{votes[own]} for its own label")
    return f"{who} " + ", ".join(parts)
