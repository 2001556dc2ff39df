"""A stage's method key and parameters, checked against the method registry of the table's task.

A key may name a classification method, a regression method or both (the
duplicate stages); with ``[input] task = "auto"`` the parameters must suit one
of the tables, and are checked again against the task's own once the target
has been read (:func:`curate.pipeline.prepare.resolve_stages`).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from curate.errors import PipelineFileError, UsageError
from curate.methods import METHODS, REGRESSION_METHODS, method_for
from curate.methods.base import MethodInfo
from curate.settings import STAGE_KEYS, canonical, check_params, suggest
from curate.spec._where import _fail, _Where

__all__ = ["_method", "_stage_params"]


def _method(where: _Where, body: Mapping[str, Any], index: int) -> str:
    """The stage's method key (any case, either task's methods); a missing one names the
    misspelled key that was meant."""
    keys = sorted(set(METHODS) | set(REGRESSION_METHODS))
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


def _stage_params(where: _Where, key: str, given: dict[str, Any], task: str,
                  index: int) -> tuple[dict[str, Any], MethodInfo]:
    """The stage's parameters checked against its method's table for the task (both, for
    "auto"), and the method they suit; the first bad parameter's line is the one named."""
    tables = {"classification": (METHODS,), "regression": (REGRESSION_METHODS,)}.get(
        task, (METHODS, REGRESSION_METHODS))
    infos = [table[key] for table in tables if key in table]
    if not infos:
        try:
            method_for(key, task)
        except UsageError as err:
            _fail(where, "stages", "method", err.message, str(err.hint), index)
    first: UsageError | None = None
    for info in infos:
        # check_params stops at the first bad parameter in this order: its line is the one named
        bad = next((k for k in given if info.param(k) is None
                    or info.param(k).problem(given[k])), None)  # type: ignore[union-attr]
        try:
            return check_params(info, given, where=where.at("stages", bad, index,
                                                             name_key=False)), info
        except UsageError as err:
            first = first or err
    assert first is not None
    raise PipelineFileError(first.message, hint=first.hint)
