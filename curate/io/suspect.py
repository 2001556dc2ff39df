"""Columns that are not what their type says: id-like text, and numbers with stray text cells.

Both are silent damage when left alone: a text column with a different value
on almost every row (ids, free text, timestamps written as text) becomes one
nominal level per row, a one-hot block of rows x rows; a numeric column with
one stray text cell ("n/a", "12,5") is read as text and turns nominal, so its
numbers stop counting as numbers. The thresholds below are common practice,
no source: a column is id-like when it has more than :data:`ID_LIKE_MIN`
distinct values and more than :data:`ID_LIKE_SHARE` of the rows are distinct;
a text column holds stray cells when all but at most :data:`STRAY_SHARE` of
its present values parse as numbers.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import polars as pl

from curate.errors import InputError, first_ids
from curate.settings import InputSettings

__all__ = ["ID_LIKE_MIN", "ID_LIKE_SHARE", "STRAY_CHECK", "STRAY_SHARE", "as_numbers",
           "describe_stray", "refuse_id_like", "stray_text"]

ID_LIKE_MIN = 20
ID_LIKE_SHARE = 0.5
STRAY_SHARE = 0.05
STRAY_CHECK = "parses_as_number"  # the check named for quarantined stray cells


def _text(dtype: pl.DataType) -> bool:
    return dtype in (pl.String, pl.Categorical) or isinstance(dtype, pl.Enum)


def refuse_id_like(frame: pl.DataFrame, kinds: dict[str, str], settings: InputSettings) -> None:
    """Refuse undeclared text features with a distinct value on most rows.

    A column is declared when ``[input] features`` lists the features, or a
    column rule gives it a ``type``; ignored columns are no features at all.

    Examples
    --------
    >>> from pathlib import Path
    >>> frame = pl.DataFrame({"note": [f"n{i}" for i in range(30)], "y": ["a", "b"] * 15})
    >>> try:
    ...     refuse_id_like(frame, {"note": "category"}, InputSettings(Path("t.csv"), "y"))
    ... except InputError as err:
    ...     print(err.message)
    t.csv: text column 'note' (30 distinct values in 30 rows) looks like an id or free text, not a feature
    """
    if settings.features is not None or frame.height == 0:
        return
    declared = {rule.name for rule in settings.columns if rule.type}
    found = []
    for name, kind in kinds.items():
        if kind != "category" or name in declared or not _text(frame.schema[name]):
            continue
        distinct = frame[name].n_unique()
        if distinct > ID_LIKE_MIN and distinct > ID_LIKE_SHARE * frame.height:
            found.append((name, distinct))
    if not found:
        return
    what = ", ".join(f"{name!r} ({distinct} distinct values in {frame.height} rows)"
                     for name, distinct in found)
    noun = "column" if len(found) == 1 else "columns"
    names = ", ".join(f'"{name}"' for name, _ in found)
    first = found[0][0]
    raise InputError(f"{settings.path}: text {noun} {what} "
                     f"{'looks' if len(found) == 1 else 'look'} like an id or free text, "
                     "not a feature",
                     hint=f"add {'it' if len(found) == 1 else 'them'} to [input] ignore = "
                          f"[{names}], or list the features in [input] features, or declare "
                          f"it with [input.columns.{first}] type = \"category\" if its values "
                          "are categories")


def stray_text(frame: pl.DataFrame, columns: Sequence[str]) -> pl.DataFrame:
    """Cells of mostly-numeric text columns that do not parse as numbers.

    Returns one row per stray cell: ``position``, ``column``, ``check``
    (:data:`STRAY_CHECK`) and ``value``, the failure table of
    :func:`curate.io.schema.validate`.

    Examples
    --------
    >>> values = [str(v) for v in range(30)]
    >>> values[4] = "n/a"
    >>> stray_text(pl.DataFrame({"a": values}), ["a"]).rows()
    [(4, 'a', 'parses_as_number', 'n/a')]
    """
    parts: list[dict[str, Any]] = []
    for name in columns:
        if frame.schema[name] != pl.String:
            continue
        text = frame[name]
        numbers = text.str.strip_chars().cast(pl.Float64, strict=False)
        stray = text.is_not_null() & numbers.is_null()
        count, present = int(stray.sum()), text.len() - text.null_count()
        if count == 0 or count > STRAY_SHARE * present:
            continue
        positions = stray.arg_true()
        parts.append({"position": positions, "column": [name] * count,
                      "check": [STRAY_CHECK] * count, "value": text.gather(positions)})
    schema = {"position": pl.Int64, "column": pl.String, "check": pl.String, "value": pl.String}
    if not parts:
        return pl.DataFrame(schema=schema)
    return pl.concat([pl.DataFrame(p).cast(schema) for p in parts]).sort("position")  # type: ignore[arg-type]


def describe_stray(failures: pl.DataFrame, ids: Sequence[Any], source: str) -> str:
    """Say, per column, which rows hold stray text and what it is (first few values).

    Examples
    --------
    >>> f = pl.DataFrame({"position": [4], "column": ["a"], "check": [STRAY_CHECK],
    ...                   "value": ["n/a"]})
    >>> describe_stray(f, list(range(30)), "t.csv")
    "t.csv: numeric column 'a' has text that is not a number in 1 row (4): 'n/a'"
    """
    lines = []
    for (column,), part in failures.group_by("column", maintain_order=True):
        rows = [ids[p] for p in part["position"].to_list()]
        values = ", ".join(repr(v) for v in part["value"].head(5).to_list())
        lines.append(f"{source}: numeric column {column!r} has text that is not a number in "
                     f"{first_ids(rows)}: {values}")
    return "\n".join(lines)


def as_numbers(frame: pl.DataFrame, failures: pl.DataFrame) -> pl.DataFrame:
    """The columns named in ``failures`` read as numbers (stray cells become missing).

    Examples
    --------
    >>> f = pl.DataFrame({"a": ["1.5", "x"]})
    >>> as_numbers(f, stray_text(f.vstack(pl.DataFrame({"a": ["2"] * 30})), ["a"]))["a"].to_list()
    [1.5, None]
    """
    columns = failures["column"].unique(maintain_order=True).to_list()
    return frame.with_columns([pl.col(c).str.strip_chars().cast(pl.Float64, strict=False)
                               for c in columns])
