"""Classification or regression: what the target column asks for, and why.

``[input] task`` is ``"classification"``, ``"regression"`` or ``"auto"`` (the
default). ``auto`` reads the target column:

* text, categories and true/false values are classes;
* numbers with a fractional part are a quantity: regression;
* whole numbers (integers, or floats that are all whole) are regression when
  they take many distinct values for the number of rows: more than
  :data:`MIN_DISTINCT` values and at least one distinct value per
  :data:`ROWS_PER_VALUE` rows. Codes such as 0/1/2 or star ratings stay
  classes; ages, counts and prices in whole units become regression.

The choice comes with its reason in words, which the run prints and writes to
summary.json, so that a wrong guess is seen and fixed with ``[input] task``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from curate.settings import TASKS

__all__ = ["MIN_DISTINCT", "ROWS_PER_VALUE", "TaskChoice", "detect_task"]

MIN_DISTINCT = 10  # up to this many distinct whole numbers are read as class codes
ROWS_PER_VALUE = 20  # fewer rows per distinct value than this reads as a quantity


@dataclass(frozen=True)
class TaskChoice:
    """The task a run uses (``classification`` or ``regression``) and the reason in words."""

    task: str
    reason: str

    def as_dict(self) -> dict[str, str]:
        """The choice as summary.json records it.

        Examples
        --------
        >>> TaskChoice("regression", "why").as_dict()
        {'task': 'regression', 'reason': 'why'}
        """
        return {"task": self.task, "reason": self.reason}


def _values(values: Any) -> tuple[np.ndarray, str]:
    """Non-missing values as numpy and their kind: 'integer', 'float', 'bool' or 'text'."""
    dtype: Any = getattr(values, "dtype", None)
    if hasattr(dtype, "is_numeric") and hasattr(values, "drop_nulls"):  # a polars Series
        kept = values.drop_nulls()
        if dtype.is_integer():
            return kept.to_numpy(), "integer"
        if dtype.is_float():
            return kept.to_numpy(), "float"
        return kept.to_numpy(), "bool" if str(dtype) == "Boolean" else "text"
    arr = np.asarray(values)
    kind = arr.dtype.kind
    if kind in "iu":
        return arr, "integer"
    if kind == "f":
        return arr[~np.isnan(arr)], "float"
    if kind == "b":
        return arr, "bool"
    if kind == "O":
        present = [v for v in arr.tolist() if v is not None]
        if present and all(isinstance(v, int | float) and not isinstance(v, bool) for v in present):
            floats = np.asarray(present, dtype=np.float64)
            whole = all(isinstance(v, int) for v in present)
            return floats, "integer" if whole else "float"
    return arr, "text"


def detect_task(values: Any, asked: str = "auto", *, column: str = "target") -> TaskChoice:
    """Choose classification or regression for a target column; say why.

    Parameters
    ----------
    values : array-like or polars Series
        The target column (missing values are left out of the count).
    asked : str
        ``"auto"``, or the task set by ``[input] task``, which is taken as given.
    column : str
        The column's name, for the reason.

    Examples
    --------
    >>> detect_task([12.5, 3.0, 41.25]).task
    'regression'
    >>> detect_task(["ok", "worn", "ok"]).reason
    "column 'target' holds text: classes"
    >>> choice = detect_task(list(range(100)) * 2)
    >>> choice.task, choice.reason
    ('regression', "column 'target' holds 100 distinct whole numbers in 200 rows (more than 10 \
values, and one per 2.0 rows, fewer than 20): a quantity, so regression")
    >>> detect_task([0, 1, 2] * 50).task
    'classification'
    >>> detect_task([0, 1], "regression").reason
    'set by [input] task = "regression"'
    """
    if asked not in TASKS:
        raise ValueError(f"task must be one of {TASKS}, got {asked!r}")
    if asked != "auto":
        return TaskChoice(asked, f"set by [input] task = \"{asked}\"")
    present, kind = _values(values)
    name = f"column {column!r}"
    if kind == "text":
        return TaskChoice("classification", f"{name} holds text: classes")
    if kind == "bool":
        return TaskChoice("classification", f"{name} holds true/false values: classes")
    if len(present) == 0:
        return TaskChoice("classification", f"{name} has no values to read: classes by default")
    numbers = np.asarray(present, dtype=np.float64)
    if kind == "float" and not np.all(np.isfinite(numbers) & (numbers == np.round(numbers))):
        example = next(v for v in numbers if not (np.isfinite(v) and v == round(v)))
        return TaskChoice("regression", f"{name} holds numbers with a fractional part (such as "
                                        f"{example:g}): a quantity, so regression")
    distinct = len(np.unique(numbers))
    per_value = len(numbers) / distinct
    whole = "whole numbers" if kind == "integer" else "whole numbers (stored as floats)"
    counted = f"{name} holds {distinct} distinct {whole} in {len(numbers)} rows"
    if distinct > MIN_DISTINCT and per_value < ROWS_PER_VALUE:
        return TaskChoice("regression", f"{counted} (more than {MIN_DISTINCT} values, and one per "
                                        f"{per_value:.1f} rows, fewer than {ROWS_PER_VALUE}): a "
                                        "quantity, so regression")
    why = (f"at most {MIN_DISTINCT} values" if distinct <= MIN_DISTINCT
           else f"{per_value:.1f} rows per value, at least {ROWS_PER_VALUE}")
    return TaskChoice("classification", f"{counted} ({why}): class codes, so classification")
