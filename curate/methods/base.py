"""What every method shares: its declaration and the Selection it returns.

A method is a pure function ``method(space, labels, *, removable, seed, **params)``
returning a :class:`Selection` of positions local to ``space``, built with a
:class:`SelectionBuilder`. It never reads files, never keeps state and draws
randomness only from ``seed``. Its :class:`MethodInfo` declares its parameters
(:class:`curate.settings.Param`), its reason codes and what it can do.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from curate.settings import Param
from curate.space.labels import encode_labels

__all__ = ["MethodInfo", "Selection", "SelectionBuilder", "encode"]


@dataclass(frozen=True)
class MethodInfo:
    """The declaration of one method: its key, published name, parameters and reasons.

    Capabilities, read by the layers above instead of family names:
    ``uses_neighbours`` (the stage's ``k`` must fit the rows it gets),
    ``compares_classes`` (its input needs two or more classes, and every class
    more rows than ``k``), ``runs_partitioned`` (on a cluster it runs per
    stratified partition, then over their union, instead of sending its
    neighbour queries to the workers). ``catches`` names the kinds of fault
    (:data:`curate.settings.FAULT_KINDS`) the method is meant to find, against
    which `curate evaluate --truth` scores its recall. ``judged_by_lists``: its result is a
    function of every row's k nearest rows of the stage, found in one
    whole-stage search: a run keeps those lists, and an update brings them up
    to date and runs the method again on them.
    """

    key: str
    name: str
    family: str
    reference: str
    purpose: str
    func: Callable[..., Selection]
    params: tuple[Param, ...]
    reasons: dict[str, str]
    uses_neighbours: bool = True
    compares_classes: bool = False
    runs_partitioned: bool = False
    catches: tuple[str, ...] = ()

    def default_limit(self) -> tuple[float, bool]:
        """The safety limit of a stage whose pipeline file sets no ``max_removed_share``.

        Returns ``(max_removed_share, keep_every_class)``. Condensing and hybrid
        methods remove most rows by design: a class may shrink to any share,
        but never vanish. Every other method may remove at most half of a class.

        Examples
        --------
        >>> from curate.methods import METHODS
        >>> METHODS["fcnn"].default_limit(), METHODS["enn"].default_limit()
        ((1.0, True), (0.5, False))
        """
        if self.family in ("condensing", "hybrid"):
            return 1.0, True
        return 0.5, False

    def limit_text(self, task: str = "classification") -> str:
        """The default safety limit in words, for `curate methods`.

        On a regression table the limit bounds the share of all the stage's rows.

        Examples
        --------
        >>> from curate.methods import METHODS
        >>> METHODS["enn"].limit_text()
        'at most 50% of each class (max_removed_share = 0.5)'
        >>> METHODS["enn"].limit_text("regression")
        "at most 50% of the stage's rows (max_removed_share = 0.5)"
        """
        share, keep = self.default_limit()
        if task == "regression":
            return ("none: any share of the stage's rows" if share >= 1.0 else
                    f"at most {share:.0%} of the stage's rows (max_removed_share = {share:g})")
        if keep:
            return "any share of a class, but every class keeps at least one row"
        return f"at most {share:.0%} of each class (max_removed_share = {share:g})"
    judged_by_lists: bool = False

    def defaults(self) -> dict[str, Any]:
        """Return the default of every parameter."""
        return {p.name: p.default for p in self.params}

    def param(self, name: str) -> Param | None:
        """Return the declared parameter called ``name``, if any."""
        return next((p for p in self.params if p.name == name), None)


@dataclass
class Selection:
    """What a method decided, in positions local to the space it was given.

    ``kept`` and ``removed`` partition ``range(n)``; the evidence lists run
    parallel to ``removed``. ``kept_as`` is -1 where no kept row stands for the
    removed one; ``step`` is 1 for methods that do not iterate. ``info`` carries
    method-level facts for the summary (JSON-serialisable).

    Label-noise methods may flag rows without removing them: ``action`` is
    ``"relabel"`` or ``"report"`` and ``flagged`` holds their records (a
    Selection in which they are the removed rows). ``suggested`` has one
    entry per row, the label a method suggests for it, None elsewhere.
    """

    kept: np.ndarray
    removed: np.ndarray
    reason: list[str]
    detail: list[str]
    neighbours: list[np.ndarray]
    distances: list[np.ndarray]
    kept_as: np.ndarray
    step: np.ndarray
    info: dict[str, Any] = field(default_factory=dict)
    scores: dict[str, np.ndarray] = field(default_factory=dict)
    groups: list[np.ndarray] = field(default_factory=list)
    flagged: Selection | None = None
    suggested: np.ndarray | None = None
    action: str = "remove"

    @property
    def n(self) -> int:
        """Number of rows the method was given."""
        return int(len(self.kept) + len(self.removed))


class SelectionBuilder:
    """Collects one method's removals, in positions local to its space, then builds the
    :class:`Selection` (the run maps it to input rows and the audit table later).

    Examples
    --------
    >>> r = SelectionBuilder(4)
    >>> r.add(2, "reason", "a plain sentence", neighbours=[1], distances=[0.5], kept_as=1)
    >>> s = r.selection()
    >>> s.kept.tolist(), s.removed.tolist(), s.kept_as.tolist()
    ([0, 1, 3], [2], [1])
    """

    def __init__(self, n: int) -> None:
        self.n = n
        self._pos: list[int] = []
        self._reason: list[str] = []
        self._detail: list[str] = []
        self._nbr: list[np.ndarray] = []
        self._dist: list[np.ndarray] = []
        self._kept_as: list[int] = []
        self._step: list[int] = []

    def __len__(self) -> int:
        return len(self._pos)

    def add(self, position: int, reason: str, detail: str, *,
            neighbours: Sequence[int] | np.ndarray = (),
            distances: Sequence[float] | np.ndarray = (),
            kept_as: int = -1, step: int = 1) -> None:
        """Record that ``position`` leaves, with its evidence."""
        self._pos.append(int(position))
        self._reason.append(reason)
        self._detail.append(detail)
        self._nbr.append(np.asarray(neighbours, dtype=np.int64))
        self._dist.append(np.asarray(distances, dtype=np.float64))
        self._kept_as.append(int(kept_as))
        self._step.append(int(step))

    def add_many(self, positions: np.ndarray, reason: str, details: Sequence[str], *,
                 neighbours: np.ndarray, distances: np.ndarray, step: int = 1) -> None:
        """Record that ``positions`` leave, one row of ``neighbours``/``distances`` each.

        Examples
        --------
        >>> r = SelectionBuilder(3)
        >>> r.add_many(np.array([0, 2]), "why", ["a", "b"], neighbours=np.array([[1], [1]]),
        ...            distances=np.array([[0.5], [0.7]]))
        >>> r.selection().removed.tolist()
        [0, 2]
        """
        self._pos.extend(np.asarray(positions, dtype=np.int64).tolist())
        self._reason.extend([reason] * len(positions))
        self._detail.extend(details)
        self._nbr.extend(np.asarray(neighbours, dtype=np.int64))
        self._dist.extend(np.asarray(distances, dtype=np.float64))
        self._kept_as.extend([-1] * len(positions))
        self._step.extend([int(step)] * len(positions))

    def selection(self, info: dict[str, Any] | None = None,
                  groups: list[np.ndarray] | None = None) -> Selection:
        """Build the Selection; raise if a position was removed twice."""
        removed = np.asarray(self._pos, dtype=np.int64)
        if len(np.unique(removed)) != len(removed):
            raise AssertionError("a method removed the same row twice")
        mask = np.ones(self.n, dtype=bool)
        mask[removed] = False
        return Selection(
            kept=np.flatnonzero(mask).astype(np.int64),
            removed=removed,
            reason=self._reason,
            detail=self._detail,
            neighbours=self._nbr,
            distances=self._dist,
            kept_as=np.asarray(self._kept_as, dtype=np.int64),
            step=np.asarray(self._step, dtype=np.int64),
            info=info or {},
            groups=groups or [],
        )


def encode(labels: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (distinct labels in sorted order, integer code per row).

    Examples
    --------
    >>> names, y = encode(np.array(["b", "a", "b"]))
    >>> names.tolist(), y.tolist()
    (['a', 'b'], [1, 0, 1])
    """
    return encode_labels(labels)
