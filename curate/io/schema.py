"""Column rules -> pandera (polars backend) schema; validation collecting every failure; quarantine."""

from __future__ import annotations

from collections.abc import Collection
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandera.polars as pa
import polars as pl

from curate.errors import InputError, PipelineFileError, SchemaFailure, first_ids
from curate.io import suspect
from curate.io.trust import import_schema_module
from curate.settings import ColumnRule, InputSettings

__all__ = ["Validation", "describe_failures", "feature_kinds", "load_model", "rules_schema",
           "validate"]

_DTYPES = {"float": pl.Float64, "int": pl.Int64, "category": pl.String, "string": pl.String,
           "bool": pl.Boolean}


@dataclass(frozen=True)
class Validation:
    """The outcome of the input check.

    ``valid`` marks rows that passed; ``failures`` has one row per failed
    (row, column, check) with columns position, column, check, value;
    ``frame`` holds the passing rows with types coerced as the schema says.
    """

    valid: np.ndarray
    failures: pl.DataFrame
    frame: pl.DataFrame


def load_model(ref: str) -> pa.DataFrameSchema:
    """Load a pandera model or schema from ``path/to/file.py:Name`` or ``package.module:Name``.

    Whether the pipeline file may name that module is decided before, when the
    file is read (:mod:`curate.io.trust`); here it is imported, with clean errors.
    """
    module_ref, _, name = ref.rpartition(":")
    module = import_schema_module(module_ref)
    model = getattr(module, name, None)
    if model is None:
        raise PipelineFileError(f"schema module {module_ref!r} has no {name!r}",
                                hint="fix the class name after the colon in [input] schema")
    try:
        schema = model.to_schema() if hasattr(model, "to_schema") else model
    except Exception as err:  # pandera checks the model's fields here, and user code runs
        raise PipelineFileError(f"schema {ref} cannot be turned into a pandera schema: "
                                f"{type(err).__name__}: {err}",
                                hint="fix the model's fields (see pandera's DataFrameModel "
                                     "documentation)") from None
    if not isinstance(schema, pa.DataFrameSchema):
        raise PipelineFileError(f"{ref} is not a pandera polars model or schema",
                                hint="subclass pandera.polars.DataFrameModel")
    return schema


def _column(rule: ColumnRule) -> pa.Column:
    checks = []
    if rule.min is not None:
        checks.append(pa.Check.ge(rule.min))
    if rule.max is not None:
        checks.append(pa.Check.le(rule.max))
    if rule.allowed is not None:
        checks.append(pa.Check.isin(list(rule.allowed)))
    dtype = _DTYPES[rule.type] if rule.type else None
    return pa.Column(dtype, checks=checks, nullable=rule.nullable, unique=rule.unique,
                     coerce=dtype is not None)


def rules_schema(settings: InputSettings) -> pa.DataFrameSchema:
    """Build the schema: the file's column rules, plus a present, non-empty label column.

    Examples
    --------
    >>> from pathlib import Path
    >>> from curate.settings import InputSettings, ColumnRule
    >>> s = rules_schema(InputSettings(Path("x.csv"), "y", columns=(ColumnRule("a", "float", 0, 1),)))
    >>> sorted(s.columns)
    ['a', 'y']
    """
    columns: dict[str, pa.Column] = {r.name: _column(r) for r in settings.columns}
    if settings.schema:
        schema = load_model(settings.schema)
        columns = {**schema.columns, **columns}
    columns.setdefault(settings.label, pa.Column(None, nullable=False))
    return pa.DataFrameSchema(columns)


def feature_columns(frame: pl.DataFrame, settings: InputSettings) -> list[str]:
    """Columns that are features: all but label, id and ignored ones (or the named list)."""
    if settings.features is not None:
        missing = [c for c in settings.features if c not in frame.columns]
        if missing:
            raise InputError(f"{settings.path}: feature columns {missing[:5]} are not in the input",
                             hint="fix [input] features, or the input's header")
        return list(settings.features)
    skip = {settings.label, settings.id, *settings.ignore}
    unknown = [c for c in settings.ignore if c not in frame.columns]
    if unknown:
        raise InputError(f"{settings.path}: ignored columns {unknown[:5]} are not in the input",
                         hint="fix [input] ignore (names are case-sensitive)")
    features = [c for c in frame.columns if c not in skip]
    if not features:
        raise InputError(f"{settings.path}: no feature columns are left",
                         hint="the table needs columns besides the label, id and ignored ones")
    return features


def feature_kinds(frame: pl.DataFrame, columns: list[str],
                  rules: tuple[ColumnRule, ...]) -> dict[str, str]:
    """Say for each feature column whether it is float, int, bool, category or string."""
    declared = {r.name: r.type for r in rules if r.type}
    kinds = {}
    for name in columns:
        dtype = frame.schema[name]
        if name in declared:
            kinds[name] = declared[name]  # type: ignore[assignment]
        elif dtype == pl.Boolean:
            kinds[name] = "bool"
        elif dtype.is_numeric():
            kinds[name] = "float" if dtype.is_float() else "int"
        elif dtype in (pl.String, pl.Categorical) or isinstance(dtype, pl.Enum):
            kinds[name] = "category"
        else:
            raise InputError(f"feature column {name!r} has type {dtype}, which curate cannot "
                             "measure distances on",
                             hint=f"add {name!r} to [input] ignore, or convert it to a number "
                                  "or a category")
    return kinds


def _failure_table(err: pa.errors.SchemaErrors) -> pl.DataFrame:
    cases = err.failure_cases
    frame = cases if isinstance(cases, pl.DataFrame) else pl.from_pandas(cases)
    return frame.select(
        pl.col("index").cast(pl.Int64).alias("position"),
        pl.col("column").cast(pl.String),
        pl.col("check").cast(pl.String),
        pl.col("failure_case").cast(pl.String).alias("value"),
    )


def describe_failures(failures: pl.DataFrame, ids: list[Any], ruled: Collection[str] = ()) -> str:
    """One line per column and failed check, naming the first rows and their count.

    ``failures`` is a failure table (``position``, ``column``, ``check``,
    ``value``); ``ids`` are the row ids by input position. A ``not_nullable``
    failure of a column in ``ruled`` (columns with rules in the pipeline file)
    says that those rules forbid gaps unless they say otherwise.

    Examples
    --------
    >>> table = pl.DataFrame({"position": [3, 7], "column": ["depth", "depth"],
    ...                       "check": ["not_nullable"] * 2, "value": [None, None]})
    >>> print(describe_failures(table, list(range(10, 20)), ruled={"depth"}))
    ... # doctest: +ELLIPSIS
      column 'depth' failed not_nullable: 2 rows (first: 13, 17) (column rules default to nullable...)
    """
    lines = []
    grouped = failures.group_by(["column", "check"], maintain_order=True).agg(pl.col("position"))
    for column, check, positions in grouped.iter_rows():
        where = f"column {column!r}" if column else "table"
        rows = [ids[p] for p in positions if p is not None]
        spot = first_ids(rows) if rows else "the whole column"
        note = (f" (column rules default to nullable = false; write nullable = true in "
                f"[input.columns.{column}] to allow gaps)"
                if check == "not_nullable" and column in ruled else "")
        lines.append(f"  {where} failed {check}: {spot}{note}")
    return "\n".join(lines)


def _run(schema: pa.DataFrameSchema, frame: pl.DataFrame) -> tuple[pl.DataFrame | None, pl.DataFrame]:
    try:
        return schema.validate(frame, lazy=True), pl.DataFrame()
    except pa.errors.SchemaErrors as err:
        return None, _failure_table(err)
    except pa.errors.SchemaError as err:  # raised eagerly by some checks even when lazy
        return None, pl.DataFrame({"position": [None], "column": [None], "check": [str(err)],
                                   "value": [None]}, schema={"position": pl.Int64,
                                   "column": pl.String, "check": pl.String, "value": pl.String})


def _numeric_candidates(frame: pl.DataFrame, settings: InputSettings,
                        schema: pa.DataFrameSchema) -> list[str]:
    """Feature columns whose type nobody declared: where stray text must be looked for."""
    skip = {settings.label, settings.id, *settings.ignore}
    typed = {name for name, col in schema.columns.items() if col.dtype is not None}
    names = settings.features if settings.features is not None else frame.columns
    return [c for c in names if c in frame.columns and c not in skip and c not in typed]


def _stray_cells(frame: pl.DataFrame, settings: InputSettings, schema: pa.DataFrameSchema,
                 ids: list[Any]) -> tuple[pl.DataFrame, pl.DataFrame]:
    """Find stray text in numeric columns: stop, or read those columns as numbers.

    Returns the frame to check (such columns as numbers) and the stray cells,
    each a row-level failure to quarantine.
    """
    stray = suspect.stray_text(frame, _numeric_candidates(frame, settings, schema))
    if stray.height == 0:
        return frame, stray
    if settings.on_invalid == "stop":
        raise SchemaFailure(suspect.describe_stray(stray, ids, str(settings.path)),
                            hint="fix those cells (a number, or empty for a missing value); or "
                                 "set on_invalid = \"quarantine\" in [input] to set those rows "
                                 "aside; or, if the column is text, declare it: "
                                 "[input.columns.NAME] type = \"category\"",
                            failures=stray)
    return suspect.as_numbers(frame, stray), stray


def _run_on(schema: pa.DataFrameSchema, frame: pl.DataFrame,
            rows: np.ndarray) -> tuple[pl.DataFrame | None, pl.DataFrame]:
    """:func:`_run` on the rows ``rows`` of ``frame``, failure positions in ``frame``'s terms."""
    if rows.all():
        return _run(schema, frame)
    checked, failures = _run(schema, frame.filter(pl.Series(rows)))
    if failures.height:
        where = np.flatnonzero(rows).astype(np.int64)
        failures = failures.with_columns(pl.lit(pl.Series(where)).gather(pl.col("position"))
                                         .alias("position"))
    return checked, failures


def validate(frame: pl.DataFrame, settings: InputSettings, ids: list[Any]) -> Validation:
    """Check ``frame`` against the pipeline's schema, collecting every failure.

    Table-level failures (a missing column, a wrong type) always stop the run.
    Row-level failures stop it too unless ``on_invalid = "quarantine"``: then
    the failing rows are marked invalid and the rest is checked once more.
    Stray text in an undeclared numeric column (see :mod:`curate.io.suspect`)
    is a row-level failure of check ``parses_as_number``.
    """
    schema = rules_schema(settings)
    ruled = {rule.name for rule in settings.columns}
    absent = [name for name, col in schema.columns.items()
              if name not in frame.columns and getattr(col, "required", True)]
    if absent:
        raise SchemaFailure(f"input {settings.path} lacks columns the schema requires: "
                            + ", ".join(repr(c) for c in absent) + " (check column_in_dataframe)",
                            hint="fix the input's header, or the column rules / schema model; "
                                 f"the input has: {', '.join(frame.columns[:12])}")
    frame, stray = _stray_cells(frame, settings, schema, ids)
    first = np.ones(frame.height, dtype=bool)
    first[stray["position"].to_numpy()] = False
    checked, failures = _run_on(schema, frame, first)
    if checked is not None:
        return Validation(first, stray, checked)
    table_level = failures.filter(pl.col("position").is_null())
    row_level = pl.concat([stray, failures.filter(pl.col("position").is_not_null())])
    coerce_columns = set(row_level.filter(pl.col("check").str.contains("coerce"))["column"].to_list())
    table_level = table_level.filter(~(pl.col("column").is_in(list(coerce_columns))
                                       & pl.col("check").str.starts_with("dtype")))
    if table_level.height or settings.on_invalid == "stop":
        shown = failures if settings.on_invalid == "stop" else table_level
        raise SchemaFailure(f"input {settings.path} failed its schema:\n"
                            f"{describe_failures(shown, ids, ruled)}",
                            hint="fix the input, or the rules in the pipeline file; for bad rows "
                                 "only, on_invalid = \"quarantine\" in [input] sets them aside",
                            failures=shown)
    valid = first.copy()
    valid[row_level["position"].unique().to_numpy()] = False
    if not valid.any():
        raise SchemaFailure(f"input {settings.path}: every row failed its schema:\n"
                            f"{describe_failures(row_level, ids, ruled)}", hint="fix the input or the rules",
                            failures=row_level)
    checked, again = _run_on(schema, frame, valid)
    if checked is None:
        raise SchemaFailure(f"input {settings.path} still fails its schema after quarantine:\n"
                            f"{describe_failures(again, ids, ruled)}", hint="fix the input or the rules",
                            failures=again)
    return Validation(valid, row_level.sort("position", maintain_order=True), checked)
