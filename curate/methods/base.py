"""What every method shares: the declared parameter table and the Selection it returns.

A method is a pure function ``method(space, labels, *, removable, seed, **params)``
returning a :class:`Selection` of positions local to ``space``. It never reads
files, never keeps state and draws randomness only from ``seed``.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from curate.errors import UsageError

__all__ = ["MethodInfo", "Param", "Removals", "Selection", "check_params", "describe_votes",
           "encode", "require_rows", "vote_counts"]


@dataclass(frozen=True)
class Param:
    """One declared parameter of a method.

    ``kind`` is the Python type accepted (``int``, ``float``, ``str``, ``bool``,
    ``list``); ``choices`` lists allowed values; ``low``/``high`` bound numbers
    (inclusive); ``check`` is an extra predicate with its own wording.
    """

    name: str
    kind: type | tuple[type, ...]
    default: Any
    doc: str
    choices: tuple[Any, ...] | None = None
    low: float | None = None
    high: float | None = None
    check: Callable[[Any], bool] | None = None
    check_says: str = ""
    required: bool = False

    def allowed(self) -> str:
        """Describe the allowed values in words.

        Examples
        --------
        >>> Param("k", int, 3, "neighbours", low=1).allowed()
        'an integer >= 1'
        >>> Param("vote", str, "majority", "rule", choices=("majority", "unanimous")).allowed()
        "one of 'majority', 'unanimous'"
        """
        if self.choices is not None:
            return "one of " + ", ".join(repr(c) for c in self.choices)
        kinds = self.kind if isinstance(self.kind, tuple) else (self.kind,)
        names = {int: "an integer", float: "a number", str: "a string", bool: "true or false",
                 list: "a list"}
        words = " or ".join(names.get(k, k.__name__) for k in kinds)
        if self.low is not None and self.high is not None:
            words += f" from {self.low} to {self.high}"
        elif self.low is not None:
            words += f" >= {self.low:g}"
        elif self.high is not None:
            words += f" <= {self.high:g}"
        if self.check_says:
            words += f" ({self.check_says})"
        return words

    def problem(self, value: Any) -> str | None:
        """Return why ``value`` is not allowed, or None when it is."""
        kinds = self.kind if isinstance(self.kind, tuple) else (self.kind,)
        ok_type = any(
            isinstance(value, k) and not (k in (int, float) and isinstance(value, bool))
            for k in kinds
        ) or (float in kinds and isinstance(value, int) and not isinstance(value, bool))
        if not ok_type:
            return f"got {value!r}, expected {self.allowed()}"
        if self.choices is not None and value not in self.choices:
            return f"got {value!r}, expected {self.allowed()}"
        if self.low is not None and value < self.low:
            return f"got {value!r}, expected {self.allowed()}"
        if self.high is not None and value > self.high:
            return f"got {value!r}, expected {self.allowed()}"
        if self.check is not None and not self.check(value):
            return f"got {value!r}, expected {self.allowed()}"
        return None


@dataclass(frozen=True)
class MethodInfo:
    """The declaration of one method: its key, published name, parameters and reasons."""

    key: str
    name: str
    family: str
    reference: str
    purpose: str
    func: Callable[..., Selection]
    params: tuple[Param, ...]
    reasons: dict[str, str]
    uses_neighbours: bool = True

    def defaults(self) -> dict[str, Any]:
        """Return the default of every parameter."""
        return {p.name: p.default for p in self.params}

    def param(self, name: str) -> Param | None:
        """Return the declared parameter called ``name``, if any."""
        return next((p for p in self.params if p.name == name), None)


def check_params(info: MethodInfo, given: dict[str, Any], *, where: str = "") -> dict[str, Any]:
    """Check ``given`` against the method's table and fill defaults.

    Examples
    --------
    >>> from curate.methods import METHODS
    >>> check_params(METHODS["enn"], {"k": 5})["k"]
    5
    >>> check_params(METHODS["enn"], {"k": 0})
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: enn: parameter 'k' got 0, expected an integer >= 1
      hint: set k to an integer >= 1
    """
    prefix = f"{where}: " if where else f"{info.key}: "
    out = info.defaults()
    for name, value in given.items():
        param = info.param(name)
        if param is None:
            known = ", ".join(p.name for p in info.params)
            raise UsageError(
                f"{prefix}unknown parameter {name!r} for method {info.key!r}",
                hint=f"the parameters of {info.key} are: {known}",
            )
        problem = param.problem(value)
        if problem is not None:
            raise UsageError(f"{prefix}parameter {name!r} {problem}",
                             hint=f"set {name} to {param.allowed()}")
        out[name] = value
    for param in info.params:
        if param.required and out.get(param.name) is None:
            raise UsageError(f"{prefix}parameter {param.name!r} is required ({param.doc})",
                             hint=f"set {param.name} to {param.allowed()}")
    return out


@dataclass
class Selection:
    """What a method decided, in positions local to the space it was given.

    ``kept`` and ``removed`` partition ``range(n)``; the evidence lists run
    parallel to ``removed``. ``kept_as`` is -1 where no kept row stands for the
    removed one; ``step`` is 1 for methods that do not iterate. ``info`` carries
    method-level facts for the summary (JSON-serialisable).
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

    @property
    def n(self) -> int:
        """Number of rows the method was given."""
        return int(len(self.kept) + len(self.removed))


class Removals:
    """Collects removal records in order, then builds the :class:`Selection`.

    Examples
    --------
    >>> r = Removals(4)
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


def require_rows(n: int, k: int, key: str) -> None:
    """Stop with a clear message when a stage gets too few rows for ``k`` neighbours.

    Examples
    --------
    >>> require_rows(3, 3, "enn")
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: enn: k = 3 needs at least 4 rows, but the stage got 3
      hint: lower k below 3, or run this stage on a larger table
    """
    if k + 1 > n:
        raise UsageError(f"{key}: k = {k} needs at least {k + 1} rows, but the stage got {n}",
                         hint=f"lower k below {n}, or run this stage on a larger table")


def encode(labels: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (distinct labels in sorted order, integer code per row).

    Examples
    --------
    >>> names, y = encode(np.array(["b", "a", "b"]))
    >>> names.tolist(), y.tolist()
    (['a', 'b'], [1, 0, 1])
    """
    names, codes = np.unique(labels, return_inverse=True)
    return names, codes.astype(np.int64).reshape(-1)


def vote_counts(codes: np.ndarray, neighbour_pos: np.ndarray, n_classes: int) -> np.ndarray:
    """Count neighbour labels per row: an ``(n, n_classes)`` integer matrix."""
    counts = np.zeros((neighbour_pos.shape[0], n_classes), dtype=np.int64)
    rows = np.arange(neighbour_pos.shape[0])
    for j in range(neighbour_pos.shape[1]):
        np.add.at(counts, (rows, codes[neighbour_pos[:, j]]), 1)
    return counts


def describe_votes(counts: np.ndarray, names: np.ndarray, own: int) -> str:
    """Say in words how neighbours voted, most votes first.

    Examples
    --------
    >>> describe_votes(np.array([2, 1]), np.array(["ok", "worn"]), 1)
    "2 of its 3 nearest neighbours are labelled 'ok', 1 'worn' (its own label)"
    >>> describe_votes(np.array([1, 0]), np.array(["ok", "worn"]), 1)
    "its nearest neighbour is labelled 'ok', none 'worn' (its own label)"
    """
    k = int(counts.sum())
    order = sorted(np.flatnonzero(counts), key=lambda c: (-counts[c], c))
    parts = []
    for i, c in enumerate(order):
        mark = " (its own label)" if c == own else ""
        if i > 0:
            lead = f"{counts[c]} "
        elif k == 1:
            lead = "its nearest neighbour is labelled "
        else:
            lead = f"{counts[c]} of its {k} nearest neighbours are labelled "
        parts.append(f"{lead}{str(names[c])!r}{mark}")
    if own not in order:
        parts.append(f"none {str(names[own])!r} (its own label)")
    return ", ".join(parts)
