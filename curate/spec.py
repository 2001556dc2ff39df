"""The pipeline file (TOML) becomes frozen, validated settings; unknown keys are errors.

Every problem names the file, the key, its line and the allowed values. The
settings themselves, and the values they allow, are in :mod:`curate.settings`.
"""

from __future__ import annotations

import hashlib
import tomllib
from collections.abc import Mapping
from dataclasses import replace
from pathlib import Path
from typing import Any

from curate.errors import PipelineFileError, UsageError
from curate.methods import METHODS
from curate.settings import (
    BACKENDS,
    CLASS_CHOICES,
    COLUMN_TYPES,
    DISTANCES,
    MISSING_POLICIES,
    ON_INVALID,
    SCALES,
    ClusterSettings,
    ColumnRule,
    EngineSettings,
    InputSettings,
    OutputSettings,
    RunSettings,
    SpaceSettings,
    Spec,
    StageSettings,
    check_params,
    local_workers,
)

__all__ = ["load_spec", "spec_from_dict"]

STAGE_KEYS = ("name", "method", "max_removed_share", "classes", "seed")


class _Where:
    """Finds the line of a key in the file text, for messages."""

    def __init__(self, source: str, text: str) -> None:
        self.source = source
        self.lines = text.splitlines()

    def line(self, table: str, key: str | None, index: int = 0) -> int | None:
        current, seen = "", -1
        for number, raw in enumerate(self.lines, start=1):
            stripped = raw.strip()
            if stripped.startswith("["):
                current = stripped.strip("[] ")
                if current == table and stripped.startswith("[["):
                    seen += 1
                elif current == table:
                    seen = 0
                if key is None and current == table and seen == index:
                    return number
                continue
            if key and current == table and seen == index and stripped.split("=")[0].strip() == key:
                return number
        return None

    def at(self, table: str, key: str | None = None, index: int = 0) -> str:
        line = self.line(table, key, index)
        spot = f"[{table}]" + (f" key {key!r}" if key else "")
        if table == "stages":
            spot = f"stage {index + 1}" + (f" key {key!r}" if key else "")
        return f"{self.source}" + (f", line {line}" if line else "") + f": {spot}"


def _fail(where: _Where, table: str, key: str | None, what: str, fix: str, index: int = 0) -> None:
    raise PipelineFileError(f"{where.at(table, key, index)} {what}", hint=fix)


def _known(where: _Where, table: str, data: Mapping[str, Any], allowed: tuple[str, ...],
           index: int = 0) -> None:
    for key in data:
        if key not in allowed:
            _fail(where, table, key, "is not a known key",
                  f"use one of: {', '.join(allowed)}", index)


def _get(where: _Where, table: str, data: Mapping[str, Any], key: str, kind: type | tuple[type, ...],
         default: Any, choices: tuple[Any, ...] | None = None, index: int = 0) -> Any:
    if key not in data:
        return default
    value = data[key]
    kinds = kind if isinstance(kind, tuple) else (kind,)
    if float in kinds and isinstance(value, int) and not isinstance(value, bool):
        value = float(value)
    if not isinstance(value, kinds) or (isinstance(value, bool) and bool not in kinds):
        names = " or ".join(k.__name__ for k in kinds)
        _fail(where, table, key, f"must be {names}, got {value!r}", f"write {key} as a {names}",
              index)
    if choices is not None and value not in choices:
        _fail(where, table, key, f"got {value!r}",
              f"use one of: {', '.join(repr(c) for c in choices)}", index)
    return value


def _columns(where: _Where, data: Mapping[str, Any]) -> tuple[ColumnRule, ...]:
    rules = []
    for name, body in data.items():
        table = f"input.columns.{name}"
        if not isinstance(body, Mapping):
            _fail(where, "input", "columns", f"entry {name!r} must be a table",
                  f"write [input.columns.{name}] with type, min, max, ...")
        _known(where, table, body, ("type", "min", "max", "nullable", "allowed", "unique"))
        allowed = _get(where, table, body, "allowed", list, None)
        rules.append(ColumnRule(
            name=name,
            type=_get(where, table, body, "type", str, None, COLUMN_TYPES),
            min=_get(where, table, body, "min", float, None),
            max=_get(where, table, body, "max", float, None),
            nullable=_get(where, table, body, "nullable", bool, False),
            allowed=tuple(allowed) if allowed is not None else None,
            unique=_get(where, table, body, "unique", bool, False),
        ))
    return tuple(rules)


def _input(where: _Where, data: Mapping[str, Any], base: Path) -> InputSettings:
    keys = ("path", "label", "id", "ignore", "features", "schema", "on_invalid", "columns",
            "protect", "protect_file")
    _known(where, "input", data, keys)
    for key in ("path", "label"):
        if key not in data:
            _fail(where, "input", None, f"has no {key!r}",
                  f"add {key} = ... to [input] (the {'input table' if key == 'path' else 'class column'})")
    features = _get(where, "input", data, "features", list, None)
    protect_file = _get(where, "input", data, "protect_file", str, None)
    return InputSettings(
        path=(base / _get(where, "input", data, "path", str, "")).resolve(),
        label=_get(where, "input", data, "label", str, ""),
        id=_get(where, "input", data, "id", str, None),
        ignore=tuple(_get(where, "input", data, "ignore", list, [])),
        features=tuple(features) if features is not None else None,
        schema=_schema_ref(where, data, base),
        on_invalid=_get(where, "input", data, "on_invalid", str, "stop", ON_INVALID),
        columns=_columns(where, _get(where, "input", data, "columns", dict, {})),
        protect=tuple(_get(where, "input", data, "protect", list, [])),
        protect_file=(base / protect_file).resolve() if protect_file else None,
    )


def _schema_ref(where: _Where, data: Mapping[str, Any], base: Path) -> str | None:
    ref = _get(where, "input", data, "schema", str, None)
    if ref is None:
        return None
    module, sep, cls = ref.rpartition(":")
    if not sep or not module or not cls:
        _fail(where, "input", "schema", f"got {ref!r}",
              "write it as \"path/to/file.py:ClassName\" or \"package.module:ClassName\"")
    if module.endswith(".py"):
        module = str((base / module).resolve())
    return f"{module}:{cls}"


def _space(where: _Where, data: Mapping[str, Any]) -> SpaceSettings:
    _known(where, "space", data, ("scale", "distance", "missing", "weights"))
    weights = data.get("weights", {})
    if not (isinstance(weights, Mapping) or weights == "mutual-information"):
        _fail(where, "space", "weights", f"got {weights!r}",
              "give a table of column = weight, or \"mutual-information\"")
    if isinstance(weights, Mapping):
        for column, w in weights.items():
            if isinstance(w, bool) or not isinstance(w, int | float) or w < 0:
                _fail(where, "space", "weights", f"weight of {column!r} is {w!r}",
                      "weights are numbers >= 0")
        weights = {c: float(w) for c, w in weights.items()}
    try:
        return SpaceSettings(
            scale=_get(where, "space", data, "scale", str, "range", SCALES),
            distance=_get(where, "space", data, "distance", str, "euclidean", DISTANCES),
            missing=_get(where, "space", data, "missing", str, "stop", MISSING_POLICIES),
            weights=weights,  # type: ignore[arg-type]
        )
    except PipelineFileError as err:
        raise PipelineFileError(f"{where.at('space')}: {err.message}", hint=err.hint) from None


def _classes(where: _Where, body: Mapping[str, Any], index: int) -> str | tuple[Any, ...]:
    value = body.get("classes", "all")
    if isinstance(value, list) and value:
        return tuple(value)
    if value in CLASS_CHOICES:
        return str(value)
    _fail(where, "stages", "classes", f"got {value!r}",
          "use \"all\", \"all-but-smallest\" or a non-empty list of labels", index)
    return "all"


def _stage(where: _Where, body: Mapping[str, Any], index: int) -> StageSettings:
    if "method" not in body:
        _fail(where, "stages", None, "has no 'method'",
              f"add method = one of: {', '.join(sorted(METHODS))}", index)
    key = body["method"]
    if key not in METHODS:
        _fail(where, "stages", "method", f"names an unknown method {key!r}",
              f"use one of: {', '.join(sorted(METHODS))}", index)
    info = METHODS[key]
    given = {k: v for k, v in body.items() if k not in STAGE_KEYS}
    try:
        params = check_params(info, given)
    except UsageError as err:
        bad = next((k for k in given if info.param(k) is None or info.param(k).problem(given[k])), None)  # type: ignore[union-attr]
        raise PipelineFileError(f"{where.at('stages', bad, index)}: {err.message}",
                                hint=err.hint) from None
    share = _get(where, "stages", body, "max_removed_share", float, 0.5, index=index)
    if not 0.0 <= share <= 1.0:
        _fail(where, "stages", "max_removed_share", f"got {share!r}",
              "use a share from 0.0 to 1.0 (1.0 switches the limit off)", index)
    seed = _get(where, "stages", body, "seed", int, None, index=index)
    return StageSettings(name=_get(where, "stages", body, "name", str, f"{index + 1}: {key}", index=index),
                         method=key, params=params, max_removed_share=share,
                         classes=_classes(where, body, index), seed=seed)


def _run(where: _Where, data: Mapping[str, Any], cluster: str | None = None) -> RunSettings:
    _known(where, "run", data, ("seed", "backend", "memory_mb", "recall_target"))
    memory = _get(where, "run", data, "memory_mb", int, 1024)
    if memory < 16:
        _fail(where, "run", "memory_mb", f"got {memory}", "give at least 16 (megabytes)")
    target = _get(where, "run", data, "recall_target", float, 0.99)
    if not 0.0 < target <= 1.0:
        _fail(where, "run", "recall_target", f"got {target!r}",
              "give a share above 0.0 and at most 1.0 (0.99 unless you need speed more)")
    return RunSettings(seed=_get(where, "run", data, "seed", int, 0),
                       engine=EngineSettings(_get(where, "run", data, "backend", str, "auto", BACKENDS),
                                             memory, cluster, target))


def _cluster(where: _Where, data: Mapping[str, Any]) -> ClusterSettings:
    _known(where, "cluster", data, ("address", "partitions", "retries", "block_rows", "timeout"))
    address = _get(where, "cluster", data, "address", str, None)
    try:
        if address is not None and (not address.strip() or local_workers(address) is None
                                    and " " in address):
            raise UsageError(f"[cluster] address {address!r} is not an address",
                             hint="write a scheduler address such as \"tcp://10.0.0.5:8786\", "
                                  "or \"local:2\"")
    except UsageError as err:
        _fail(where, "cluster", "address", err.message, str(err.hint))
    for key, low in (("partitions", 1), ("retries", 0), ("block_rows", 1)):
        value = _get(where, "cluster", data, key, int, None)
        if value is not None and value < low:
            _fail(where, "cluster", key, f"got {value}", f"use {low} or more")
    timeout = _get(where, "cluster", data, "timeout", float, 3600.0)
    if timeout <= 0:
        _fail(where, "cluster", "timeout", f"got {timeout}", "give seconds > 0")
    return ClusterSettings(address, _get(where, "cluster", data, "partitions", int, None),
                           _get(where, "cluster", data, "retries", int, 2),
                           _get(where, "cluster", data, "block_rows", int, 4096), timeout)


def spec_from_dict(data: Mapping[str, Any], *, base: Path | str = ".", source: str = "<dict>",
                   text: str = "") -> Spec:
    """Check a pipeline given as a dictionary (the parsed TOML) and fill defaults.

    Examples
    --------
    >>> spec = spec_from_dict({"input": {"path": "x.csv", "label": "y"},
    ...                        "stages": [{"method": "enn", "k": 5}]})
    >>> spec.stages[0].params["k"], spec.stages[0].params["vote"], spec.output.overwrite
    (5, 'majority', False)
    >>> spec_from_dict({"input": {"path": "x.csv", "label": "y"}, "stage": []})
    Traceback (most recent call last):
    ...
    curate.errors.PipelineFileError: <dict>: [stage] is not a known section
      hint: use the sections: input, space, stages, output, run, cluster
    """
    where = _Where(source, text)
    base = Path(base)
    sections = ("input", "space", "stages", "output", "run", "cluster")
    for name in data:
        if name not in sections:
            raise PipelineFileError(f"{source}: [{name}] is not a known section",
                                    hint=f"use the sections: {', '.join(sections)}")
    if "input" not in data:
        raise PipelineFileError(f"{source}: there is no [input] section",
                                hint="add [input] with path = ... and label = ...")
    stages = data.get("stages", [])
    if not isinstance(stages, list) or not stages:
        raise PipelineFileError(f"{source}: there is no [[stages]] entry",
                                hint=f"add [[stages]] with method = one of: {', '.join(sorted(METHODS))}")
    output = dict(data.get("output", {}))
    _known(where, "output", output, ("folder", "overwrite", "scores", "report"))
    cluster = _cluster(where, dict(data.get("cluster", {})))
    return Spec(
        input=_input(where, dict(data["input"]), base),
        space=_space(where, dict(data.get("space", {}))),
        stages=tuple(_stage(where, dict(body), i) for i, body in enumerate(stages)),
        output=OutputSettings(
            folder=(base / _get(where, "output", output, "folder", str, "runs/latest")).resolve(),
            overwrite=_get(where, "output", output, "overwrite", bool, False),
            scores=_get(where, "output", output, "scores", bool, True),
            report=_get(where, "output", output, "report", bool, True),
        ),
        run=_run(where, dict(data.get("run", {})), cluster.address),
        cluster=cluster,
        source=source,
        sha256=hashlib.sha256(text.encode()).hexdigest() if text else "",
        raw=data,
    )


def load_spec(path: str | Path) -> Spec:
    """Read and check a pipeline file.

    Examples
    --------
    >>> load_spec("no/such/pipeline.toml")
    Traceback (most recent call last):
    ...
    curate.errors.PipelineFileError: pipeline file no/such/pipeline.toml does not exist
      hint: check the path, or run `curate demo` to see a working pipeline file
    """
    path = Path(path)
    if not path.is_file():
        raise PipelineFileError(f"pipeline file {path} does not exist",
                                hint="check the path, or run `curate demo` to see a working "
                                     "pipeline file")
    raw = path.read_bytes()
    try:
        text = raw.decode("utf-8")
        data = tomllib.loads(text)
    except (UnicodeDecodeError, tomllib.TOMLDecodeError) as err:
        raise PipelineFileError(f"pipeline file {path} is not valid TOML: {err}",
                                hint="fix the syntax at the line named; strings need quotes") from None
    spec = spec_from_dict(data, base=path.parent, source=str(path), text=text)
    return replace(spec, sha256=hashlib.sha256(raw).hexdigest())
