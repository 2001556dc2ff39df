"""The pipeline file (TOML) becomes frozen, validated settings; unknown keys are errors.

Every problem names the file, the key, its line and the allowed values. The
settings themselves, and the values they allow, are in :mod:`curate.settings`.
"""

from __future__ import annotations

import hashlib
import tomllib
from collections.abc import Iterable, Mapping
from dataclasses import replace
from pathlib import Path
from typing import Any

from curate.errors import PipelineFileError, UsageError
from curate.io.trust import TrustedCode, refusal, trusted_code
from curate.methods import METHODS
from curate.settings import (
    BACKENDS,
    CLASS_CHOICES,
    COLUMN_TYPES,
    DISTANCES,
    MIN_MEMORY_MB,
    MISSING_POLICIES,
    ON_INVALID,
    SCALES,
    STAGE_KEYS,
    ClusterSettings,
    ColumnRule,
    EngineSettings,
    InputSettings,
    OutputSettings,
    RunSettings,
    SpaceSettings,
    Spec,
    StageSettings,
    canonical,
    check_params,
    local_workers,
    suggest,
)
from curate.spec._where import _fail, _get, _known, _path, _Where

__all__ = ["load_spec", "spec_from_dict"]

# The audit's stage name for rows the schema quarantined; no stage may take it.
QUARANTINE_STAGE = "schema"


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


def _input(where: _Where, data: Mapping[str, Any], base: Path,
           trusted: TrustedCode) -> InputSettings:
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
        path=_path(where, "input", "path", base, _get(where, "input", data, "path", str, "")),
        label=_get(where, "input", data, "label", str, ""),
        id=_get(where, "input", data, "id", str, None),
        ignore=tuple(_get(where, "input", data, "ignore", list, [])),
        features=tuple(features) if features is not None else None,
        schema=_schema_ref(where, data, base, trusted),
        on_invalid=_get(where, "input", data, "on_invalid", str, "stop", ON_INVALID),
        columns=_columns(where, _get(where, "input", data, "columns", dict, {})),
        protect=tuple(_get(where, "input", data, "protect", list, [])),
        protect_file=_path(where, "input", "protect_file", base, protect_file)
        if protect_file else None,
    )


def _schema_ref(where: _Where, data: Mapping[str, Any], base: Path,
                trusted: TrustedCode) -> str | None:
    ref = _get(where, "input", data, "schema", str, None)
    if ref is None:
        return None
    module, sep, cls = ref.rpartition(":")
    if not sep or not module or not cls:
        _fail(where, "input", "schema", f"got {ref!r}",
              "write it as \"path/to/file.py:ClassName\" or \"package.module:ClassName\"")
    if module.endswith(".py"):
        module = str(_path(where, "input", "schema", base, module))
    problem = refusal(module, _path(where, "input", "schema", base, "."), trusted)
    if problem:
        _fail(where, "input", "schema", *problem)
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
    scale = _get(where, "space", data, "scale", str, "range", SCALES)
    distance = _get(where, "space", data, "distance", str, "euclidean", DISTANCES)
    missing = _get(where, "space", data, "missing", str, "stop", MISSING_POLICIES)
    try:  # the checks that span keys; each key alone was checked above, with its line
        return SpaceSettings(scale=scale, distance=distance, missing=missing,
                             weights=weights)  # type: ignore[arg-type]
    except PipelineFileError as err:  # its message names [space] already: give the line only
        raise PipelineFileError(f"{where.here('space', None)}: {err.message}",
                                hint=err.hint) from None


def _classes(where: _Where, body: Mapping[str, Any], index: int) -> str | tuple[Any, ...]:
    value = body.get("classes", "all")
    if isinstance(value, list) and value:
        return tuple(value)
    if isinstance(value, str) and canonical(value, CLASS_CHOICES) is not None:
        return str(canonical(value, CLASS_CHOICES))
    _fail(where, "stages", "classes", f"got {value!r}",
          "use \"all\", \"all-but-smallest\" or a non-empty list of labels", index)
    return "all"


def _method(where: _Where, body: Mapping[str, Any], index: int) -> str:
    """The stage's method key; a missing one names the misspelled key that was meant."""
    keys = sorted(METHODS)
    if "method" not in body:
        typo = next((k for k in body if k not in STAGE_KEYS and suggest(k, ("method",))), None)
        if typo is not None:
            _fail(where, "stages", typo, "is not a known key" + suggest(typo, ("method",))
                  + " The stage has no 'method'.", f"write method = one of: {', '.join(keys)}",
                  index)
        _fail(where, "stages", None, "has no 'method'",
              f"add method = one of: {', '.join(keys)}", index)
    key = body["method"]
    if canonical(key, tuple(keys)) is None:
        _fail(where, "stages", "method", f"names an unknown method {key!r}" + suggest(key, keys),
              f"use one of: {', '.join(keys)}", index)
    return str(canonical(key, tuple(keys)))


def _stage(where: _Where, body: Mapping[str, Any], index: int) -> StageSettings:
    key = _method(where, body, index)
    info = METHODS[key]
    given = {k: v for k, v in body.items() if k not in STAGE_KEYS}
    # check_params stops at the first bad parameter in this order: its line is the one named
    bad = next((k for k in given if info.param(k) is None or info.param(k).problem(given[k])), None)  # type: ignore[union-attr]
    try:
        params = check_params(info, given, where=where.at("stages", bad, index, name_key=False))
    except UsageError as err:
        raise PipelineFileError(err.message, hint=err.hint) from None
    default_share, keep_every_class = info.default_limit()
    share = _get(where, "stages", body, "max_removed_share", float, default_share, index=index)
    if not 0.0 <= share <= 1.0:
        _fail(where, "stages", "max_removed_share", f"got {share!r}",
              "use a share from 0.0 to 1.0 (1.0 switches the limit off)", index)
    seed = _get(where, "stages", body, "seed", int, None, index=index)
    return StageSettings(name=_get(where, "stages", body, "name", str, f"{index + 1}: {key}", index=index),
                         method=key, params=params, max_removed_share=share,
                         classes=_classes(where, body, index), seed=seed,
                         keep_every_class=keep_every_class and "max_removed_share" not in body)


def _check_names(where: _Where, bodies: list[Any], stages: tuple[StageSettings, ...]) -> None:
    """Stage names tell the stages apart in the audit: refuse empty, repeated or reserved ones."""
    seen: dict[str, int] = {}
    for index, (body, stage) in enumerate(zip(bodies, stages, strict=True)):
        key = "name" if "name" in body else None
        name = " ".join(stage.name.split()).casefold()
        if not name:
            _fail(where, "stages", key, "has an empty name",
                  "give every stage a name of its own (the audit's stage column shows it)", index)
        if name == QUARANTINE_STAGE:
            _fail(where, "stages", key, f"is named {stage.name!r}, the audit's name for rows the "
                  "schema quarantined", "give the stage another name", index)
        if name in seen:
            _fail(where, "stages", key, f"has the same name as stage {seen[name] + 1}: "
                  f"{stage.name!r} (names are compared ignoring case and extra spaces)",
                  "give every stage a name of its own, so that the audit can tell them apart",
                  index)
        seen[name] = index


def _run(where: _Where, data: Mapping[str, Any], cluster: str | None = None) -> RunSettings:
    _known(where, "run", data, ("seed", "backend", "memory_mb", "recall_target"))
    memory = _get(where, "run", data, "memory_mb", int, 1024)
    if memory < MIN_MEMORY_MB:
        _fail(where, "run", "memory_mb", f"got {memory}",
              f"give at least {MIN_MEMORY_MB} (megabytes)")
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
    except UsageError as err:  # its message names [cluster] address already: give the line only
        raise PipelineFileError(f"{where.here('cluster', 'address')}: {err.message}",
                                hint=err.hint) from None
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
                   text: str = "", trust_code: Iterable[str | Path] = ()) -> Spec:
    """Check a pipeline given as a dictionary (the parsed TOML) and fill defaults.

    ``base`` is the folder relative paths start from, and the one folder a
    schema module may load from unless ``trust_code`` names more folders or
    modules (see :mod:`curate.io.trust`).

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
    checked = tuple(_stage(where, dict(body), i) for i, body in enumerate(stages))
    _check_names(where, stages, checked)
    folder = _get(where, "output", output, "folder", str, "runs/latest")
    return Spec(
        input=_input(where, dict(data["input"]), base, trusted_code(trust_code)),
        space=_space(where, dict(data.get("space", {}))),
        stages=checked,
        output=OutputSettings(
            folder=_path(where, "output", "folder", base, folder),
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


def load_spec(path: str | Path, *, trust_code: Iterable[str | Path] = ()) -> Spec:
    """Read and check a pipeline file.

    A schema module (``[input] schema``) is code: it may load only from the
    pipeline file's folder, or from the folders and modules in ``trust_code``.

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
    try:
        raw = path.read_bytes()
        text = raw.decode("utf-8")
        data = tomllib.loads(text)
    except OSError as err:
        raise PipelineFileError(f"pipeline file {path} cannot be read: {err.strerror}",
                                hint="check the file's permissions") from None
    except (UnicodeDecodeError, tomllib.TOMLDecodeError) as err:
        raise PipelineFileError(f"pipeline file {path} is not valid TOML: {err}",
                                hint="fix the syntax at the line named; strings need quotes") from None
    spec = spec_from_dict(data, base=path.parent, source=str(path), text=text,
                          trust_code=trust_code)
    return replace(spec, sha256=hashlib.sha256(raw).hexdigest())
