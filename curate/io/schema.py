"""Column rules -> pandera (polars backend) schema; validation collecting every failure; quarantine."""

from __future__ import annotations

import importlib
import importlib.util
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandera.polars as pa
import polars as pl

from curate.errors import InputError, PipelineFileError, SchemaFailure, first_ids
from curate.settings import ColumnRule, InputSettings

__all__ = ["Validation", "feature_kinds", "load_model", "rules_schema", "validate"]

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
    """Load a pandera model or schema from ``path/to/file.py:Name`` or ``package.module:Name``."""
    module_ref, _, name = ref.rpartition(":")
    try:
        if module_ref.endswith(".py"):
            path = Path(module_ref)
            if not path.is_file():
                raise PipelineFileError(f"schema file {path} does not exist",
                                        hint="fix [input] schema = \"path/to/file.py:ClassName\"")
            spec = importlib.util.spec_from_file_location(f"curate_schema_{path.stem}", path)
            assert spec is not None and spec.loader is not None
            module = importlib.util.module_from_spec(spec)
            sys.modules[spec.name] = module
            spec.loader.exec_module(module)
        else:
            module = importlib.import_module(module_ref)
    except ImportError as err:
        raise PipelineFileError(f"cannot import schema module {module_ref!r}: {err}",
                                hint="fix [input] schema, or the import inside that file") from None
    model = getattr(module, name, None)
    if model is None:
        raise PipelineFileError(f"schema module {module_ref!r} has no {name!r}",
                                hint="fix the class name after the colon in [input] schema")
    schema = model.to_schema() if hasattr(model, "to_schema") else model
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


def _describe(failures: pl.DataFrame, ids: list[Any]) -> str:
    lines = []
    grouped = failures.group_by(["column", "check"], maintain_order=True).agg(pl.col("position"))
    for column, check, positions in grouped.iter_rows():
        where = f"column {column!r}" if column else "table"
        rows = [ids[p] for p in positions if p is not None]
        spot = first_ids(rows) if rows else "the whole column"
        lines.append(f"  {where} failed {check}: {spot}")
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


def validate(frame: pl.DataFrame, settings: InputSettings, ids: list[Any]) -> Validation:
    """Check ``frame`` against the pipeline's schema, collecting every failure.

    Table-level failures (a missing column, a wrong type) always stop the run.
    Row-level failures stop it too unless ``on_invalid = "quarantine"``: then
    the failing rows are marked invalid and the rest is checked once more.
    """
    schema = rules_schema(settings)
    absent = [name for name, col in schema.columns.items()
              if name not in frame.columns and getattr(col, "required", True)]
    if absent:
        raise SchemaFailure(f"input {settings.path} lacks columns the schema requires: "
                            + ", ".join(repr(c) for c in absent) + " (check column_in_dataframe)",
                            hint="fix the input's header, or the column rules / schema model; "
                                 f"the input has: {', '.join(frame.columns[:12])}")
    checked, failures = _run(schema, frame)
    if checked is not None:
        return Validation(np.ones(frame.height, dtype=bool), failures, checked)
    table_level = failures.filter(pl.col("position").is_null())
    row_level = failures.filter(pl.col("position").is_not_null())
    coerce_columns = set(row_level.filter(pl.col("check").str.contains("coerce"))["column"].to_list())
    table_level = table_level.filter(~(pl.col("column").is_in(list(coerce_columns))
                                       & pl.col("check").str.starts_with("dtype")))
    if table_level.height or settings.on_invalid == "stop":
        shown = failures if settings.on_invalid == "stop" else table_level
        raise SchemaFailure(f"input {settings.path} failed its schema:\n{_describe(shown, ids)}",
                            hint="fix the input, or the rules in the pipeline file; for bad rows "
                                 "only, on_invalid = \"quarantine\" in [input] sets them aside",
                            failures=shown)
    valid = np.ones(frame.height, dtype=bool)
    valid[row_level["position"].unique().to_numpy()] = False
    if not valid.any():
        raise SchemaFailure(f"input {settings.path}: every row failed its schema:\n"
                            f"{_describe(row_level, ids)}", hint="fix the input or the rules",
                            failures=row_level)
    rest = frame.filter(pl.Series(valid))
    checked, again = _run(schema, rest)
    if checked is None:
        rest_ids = [i for i, ok in zip(ids, valid, strict=True) if ok]
        raise SchemaFailure(f"input {settings.path} still fails its schema after quarantine:\n"
                            f"{_describe(again, rest_ids)}", hint="fix the input or the rules",
                            failures=again)
    return Validation(valid, row_level, checked)
