"""Frozen settings, the values they allow, and the one parameter checker every layer uses.

Everything a run is told lives here as frozen dataclasses: the pipeline file's
sections (:class:`Spec` and its parts), how rows become points
(:class:`SpaceSettings`) and how neighbour queries run
(:class:`EngineSettings`). The lists of allowed values (backends, distances,
scales, missing-value policies, column types) are written once, here, and read
by the pipeline-file reader, the Sampler, the CLI and the engine alike.
:class:`Param` declares one method parameter and :func:`check_params` checks
given values against a method's table, with one message format.

This module imports no numeric library, so reading settings stays light.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Protocol

from curate.errors import PipelineFileError, UsageError, canonical, suggest

__all__ = [
    "BACKENDS", "CLASS_CHOICES", "COLUMN_TYPES", "DISTANCES", "FAULT_KINDS", "K_GRID",
    "LEARNED_WEIGHTS", "MIN_MEMORY_MB", "MISSING_POLICIES", "NOMINAL_KINDS", "ON_INVALID", "SCALES",
    "STAGE_KEYS", "TASKS",
    "ClusterSettings", "ColumnRule",
    "Declared", "EngineSettings", "InputSettings", "OutputSettings", "Param", "RunSettings",
    "SpaceSettings", "Spec", "StageSettings", "canonical", "check_params", "local_workers",
    "suggest",
]

BACKENDS = ("auto", "brute", "sklearn", "faiss", "fast", "approximate")
DISTANCES = ("euclidean", "manhattan", "heom", "hvdm")
SCALES = ("range", "zscore", "robust", "none")
MISSING_POLICIES = ("stop", "impute", "far")
LEARNED_WEIGHTS = ("mutual-information",)
COLUMN_TYPES = ("float", "int", "category", "bool", "string")
NOMINAL_KINDS = ("category", "string", "bool")
ON_INVALID = ("stop", "quarantine")
CLASS_CHOICES = ("all", "all-but-smallest")
TASKS = ("auto", "classification", "regression")  # [input] task; auto reads the target column
K_GRID = tuple(range(1, 26, 2))  # k values `curate evaluate` scores by default
# Keys every [[stages]] entry takes besides its method's own parameters.
STAGE_KEYS = ("name", "method", "max_removed_share", "classes", "seed")
# Kinds of known fault a ground-truth table (`curate evaluate --truth`) may name, and which
# stages are meant to catch each (a method declares them in ``MethodInfo.catches``).
FAULT_KINDS = {
    "re-sent": "a copy of another row, same features and label",
    "near-copy": "a copy of another row with slightly changed values, same label",
    "conflict": "a copy of another row's features with another label",
    "label-flip": "a wrong label",
    "outlier": "a numeric target far from the targets of rows with similar features",
    "schema": "a value that breaks the table's schema (quarantined before any stage)",
}
MIN_MEMORY_MB = 16  # the smallest [run] memory_mb / --memory-mb accepted


@dataclass(frozen=True)
class Param:
    """One declared parameter of a method.

    ``kind`` is the Python type accepted (``int``, ``float``, ``str``, ``bool``,
    ``list``); ``choices`` lists allowed values; ``low``/``high`` bound numbers
    (inclusive); ``check`` is an extra predicate with its own wording, and
    ``explain``, where given, says precisely why a value fails it.
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
    explain: Callable[[Any], str | None] | None = None

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
                 list: "a list", dict: "a table"}
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
            return f"got {value!r}, expected {self.allowed()}{suggest(value, self.choices)}"
        if self.low is not None and value < self.low:
            return f"got {value!r}, expected {self.allowed()}"
        if self.high is not None and value > self.high:
            return f"got {value!r}, expected {self.allowed()}"
        if self.check is not None and not self.check(value):
            precise = self.explain(value) if self.explain is not None else None
            return precise or f"got {value!r}, expected {self.allowed()}"
        return None


class Declared(Protocol):
    """What :func:`check_params` needs of a method's declaration (a ``MethodInfo``)."""

    @property
    def key(self) -> str: ...

    @property
    def params(self) -> tuple[Param, ...]: ...


def check_params(info: Declared, given: Mapping[str, Any], *, where: str = "",
                 others: str = "the keys every stage takes are: " + ", ".join(STAGE_KEYS)
                 ) -> dict[str, Any]:
    """Check ``given`` against the method's table and fill defaults.

    ``others`` names what the caller takes besides the method's own parameters
    (a pipeline file's stage keys, or the Sampler's arguments), for the hint
    when a name is unknown.

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
    >>> try:
    ...     check_params(METHODS["fcnn"], {"k": 1})
    ... except UsageError as err:
    ...     print(err.hint.split("; ")[0])
    fcnn has no parameters of its own
    """
    prefix = f"{where}: " if where else f"{info.key}: "
    declared = {p.name: p for p in info.params}
    out = {p.name: p.default for p in info.params}
    for name, value in given.items():
        param = declared.get(name)
        if param is None:
            own = (f"the parameters of {info.key} are: {', '.join(declared)}" if declared
                   else f"{info.key} has no parameters of its own")
            raise UsageError(
                f"{prefix}unknown parameter {name!r} for method {info.key!r}"
                + suggest(name, list(declared)),
                hint=f"{own}; {others}",
            )
        if param.choices is not None:
            value = canonical(value, param.choices) or value
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


@dataclass(frozen=True)
class EngineSettings:
    """How neighbour queries run: backend name, the memory they may use, and where.

    ``cluster_address`` is the address of a Dask scheduler (or ``"local:N"``),
    only an address: when set, neighbour queries are spread over the workers of
    the cluster session open for that address (see :mod:`curate.cluster`), with
    the same results, and run here when none is open. ``recall_target`` is the
    recall the approximate backend probes for, measured on a sample of each
    query (see :mod:`curate.neighbours._approx`).
    """

    backend: str = "auto"
    memory_mb: int = 1024
    cluster_address: str | None = None
    recall_target: float = 0.99


@dataclass(frozen=True)
class SpaceSettings:
    """The ``[space]`` section of a pipeline file.

    ``weights`` is a mapping column -> weight (columns left out weigh 1) or
    ``"mutual-information"``: weights learned from the labels. ``scale`` applies
    to ``"euclidean"`` and ``"manhattan"`` only (``"none"`` measures the values
    as they are, for pre-scaled features and embeddings); HEOM and HVDM fix
    their own numeric scaling, so with them any scale but the default is rejected.

    Examples
    --------
    >>> SpaceSettings(distance="hvdm", missing="far").distance
    'hvdm'
    """

    scale: str = "range"
    distance: str = "euclidean"
    missing: str = "stop"
    weights: Mapping[str, float] | str = field(default_factory=dict)

    def __post_init__(self) -> None:
        for key, value, allowed in (("scale", self.scale, SCALES),
                                    ("distance", self.distance, DISTANCES),
                                    ("missing", self.missing, MISSING_POLICIES)):
            if canonical(value, allowed) is None:
                raise PipelineFileError(f"[space] {key} = {value!r} is not allowed"
                                        + suggest(value, allowed),
                                        hint=f"use one of {', '.join(map(repr, allowed))}")
            # letter case is not a choice: "HVDM" is stored as "hvdm" (frozen, hence setattr)
            object.__setattr__(self, key, canonical(value, allowed))
        if self.distance in ("heom", "hvdm") and self.scale != "range":
            raise PipelineFileError(
                f"[space] scale = {self.scale!r} contradicts distance = {self.distance!r}, "
                "which fixes its own numeric scaling",
                hint="remove scale, or use distance = \"euclidean\" or \"manhattan\"")
        if isinstance(self.weights, str):
            if self.weights not in LEARNED_WEIGHTS:
                raise PipelineFileError(f"[space] weights = {self.weights!r} is not allowed",
                                        hint="use a table of column = weight, or "
                                             "\"mutual-information\"")
            return
        for column, weight in self.weights.items():
            number = isinstance(weight, int | float) and not isinstance(weight, bool)
            if not number or not math.isfinite(weight) or weight < 0:
                raise PipelineFileError(f"[space] weights: {column!r} = {weight!r} is not a "
                                        "finite number >= 0", hint="give each weight as a "
                                                                   "number such as 2.0")


@dataclass(frozen=True)
class ColumnRule:
    """A rule for one input column written in the pipeline file."""

    name: str
    type: str | None = None
    min: float | None = None
    max: float | None = None
    nullable: bool = False
    allowed: tuple[Any, ...] | None = None
    unique: bool = False


@dataclass(frozen=True)
class InputSettings:
    """The ``[input]`` section."""

    path: Path
    label: str
    id: str | None = None
    ignore: tuple[str, ...] = ()
    features: tuple[str, ...] | None = None
    schema: str | None = None
    on_invalid: str = "stop"
    columns: tuple[ColumnRule, ...] = ()
    protect: tuple[Any, ...] = ()
    protect_file: Path | None = None
    task: str = "auto"
    unit: str = ""


@dataclass(frozen=True)
class StageSettings:
    """One ``[[stages]]`` entry: the method, its checked parameters and the stage-level limits.

    The safety limit: no class may lose more than ``max_removed_share`` of
    its rows (1.0: no share limit) and, with ``keep_every_class``, no class
    may lose all of them. A pipeline file that sets no ``max_removed_share``
    gets the method's default (see ``MethodInfo.default_limit``). On a
    regression table the limit bounds the share of all the stage's rows.

    ``given`` holds the parameters as the file wrote them, so that a method key
    shared by both tasks is checked again, and its defaults filled, against the
    task's own table once ``[input] task = "auto"`` has read the target.
    """

    name: str
    method: str
    params: Mapping[str, Any]
    max_removed_share: float = 0.5
    classes: str | tuple[Any, ...] = "all"
    seed: int | None = None
    keep_every_class: bool = False
    given: Mapping[str, Any] | None = None


@dataclass(frozen=True)
class OutputSettings:
    """The ``[output]`` section."""

    folder: Path
    overwrite: bool = False
    scores: bool = True
    report: bool = True


@dataclass(frozen=True)
class RunSettings:
    """The ``[run]`` section: seed and neighbour engine."""

    seed: int = 0
    engine: EngineSettings = EngineSettings()


@dataclass(frozen=True)
class ClusterSettings:
    """The ``[cluster]`` section: where a Dask scheduler listens, if anywhere.

    ``address`` is a scheduler address or ``"local:N"`` (N worker processes
    started for the run); ``partitions`` splits the stages of methods that run
    partitioned (default: one per worker); ``retries`` reruns a task that
    raised; ``block_rows`` is the query rows per task; ``timeout`` (seconds)
    bounds the wait for one batch of tasks. See :mod:`curate.cluster`.
    """

    address: str | None = None
    partitions: int | None = None
    retries: int = 2
    block_rows: int = 4096
    timeout: float = 3600.0


@dataclass(frozen=True)
class Spec:
    """A whole pipeline file, checked (built by :func:`curate.spec.load_spec`)."""

    input: InputSettings
    space: SpaceSettings
    stages: tuple[StageSettings, ...]
    output: OutputSettings
    run: RunSettings = RunSettings()
    cluster: ClusterSettings = ClusterSettings()
    source: str = "<dict>"
    sha256: str = ""
    raw: Mapping[str, Any] = field(default_factory=dict)


def local_workers(address: str) -> int | None:
    """Worker processes asked for by ``"local:N"`` (``"local"``: one per core), else None.

    Examples
    --------
    >>> local_workers("local:3"), local_workers("tcp://10.0.0.5:8786")
    (3, None)
    >>> local_workers("local:0")
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: [cluster] address 'local:0' does not give a number of workers >= 1
      hint: write "local:N" with N worker processes, e.g. "local:2", or a scheduler address
    """
    head, _, count = address.partition(":")
    if head != "local":
        return None
    if not count:
        return os.cpu_count() or 1
    if not count.isdigit() or int(count) < 1:
        raise UsageError(f"[cluster] address {address!r} does not give a number of workers >= 1",
                         hint="write \"local:N\" with N worker processes, e.g. \"local:2\", or a "
                              "scheduler address")
    return int(count)
