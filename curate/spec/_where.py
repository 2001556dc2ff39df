"""Where a key stands in a pipeline file, and the typed reads that name it when it is wrong."""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

from curate.errors import PipelineFileError, canonical, suggest

__all__ = ["_Where", "_fail", "_get", "_known", "_path"]


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

    def here(self, table: str, key: str | None) -> str:
        """File and line only, for messages that name the key themselves."""
        line = self.line(table, key)
        return self.source + (f", line {line}" if line else "")

    def at(self, table: str, key: str | None = None, index: int = 0, name_key: bool = True) -> str:
        """File, line of ``key`` and the place, e.g. ``p.toml, line 6: stage 1 key 'k'``."""
        line = self.line(table, key, index)
        named = f" key {key!r}" if key and name_key else ""
        spot = f"stage {index + 1}{named}" if table == "stages" else f"[{table}]{named}"
        return f"{self.source}" + (f", line {line}" if line else "") + f": {spot}"


def _fail(where: _Where, table: str, key: str | None, what: str, fix: str, index: int = 0) -> None:
    raise PipelineFileError(f"{where.at(table, key, index)} {what}", hint=fix)


def _known(where: _Where, table: str, data: Mapping[str, Any], allowed: tuple[str, ...],
           index: int = 0) -> None:
    for key in data:
        if key not in allowed:
            _fail(where, table, key, "is not a known key" + suggest(key, allowed),
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
    if choices is not None and canonical(value, choices) is None:
        _fail(where, table, key, f"got {value!r}" + suggest(value, choices),
              f"use one of: {', '.join(repr(c) for c in choices)}", index)
    return value if choices is None else canonical(value, choices)


def _path(where: _Where, table: str, key: str, base: Path, value: str) -> Path:
    """``base / value`` resolved, with a clear error for a symbolic-link loop."""
    try:
        return (base / value).resolve()
    except (OSError, RuntimeError) as err:  # pathlib raises RuntimeError on a link loop
        _fail(where, table, key, f"names {value!r}, which cannot be resolved: {err}",
              "fix the path, or the symbolic links on it (one of them points back to itself)")
        raise
