"""CSV cells that a spreadsheet shows as text, never runs as a formula, and that read back intact.

Spreadsheets treat a cell that starts with ``=``, ``+``, ``-``, ``@``, a tab or a
carriage return as a formula, so a label or id such as ``=HYPERLINK(...)`` in a
review CSV would run when a reviewer opens the file. The OWASP guidance on CSV
injection says to prefix such cells with a single quote, which spreadsheets take
as "this is text". A cell that already starts with a quote gets one more, so
that :func:`original_text` can undo the escape exactly; it also leaves a cell
alone whose quote a spreadsheet dropped on saving.
"""

from __future__ import annotations

import polars as pl

__all__ = ["FORMULA_STARTS", "original_text", "spreadsheet_safe"]

# The leading characters the OWASP CSV-injection guidance names.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
_QUOTE = "'"


def _escaped_text(text: str) -> str:
    return _QUOTE + text if text.startswith((*FORMULA_STARTS, _QUOTE)) else text


def _starts_with_any(column: pl.Expr, prefixes: tuple[str, ...]) -> pl.Expr:
    found = pl.lit(False)
    for prefix in prefixes:
        found = found | column.str.starts_with(prefix)
    return found


def spreadsheet_safe(frame: pl.DataFrame) -> pl.DataFrame:
    """Prefix a quote to every text cell and column name a spreadsheet would run as a formula.

    Numbers stay numbers (a number is never a formula); text, category and
    enum columns are escaped.

    Examples
    --------
    >>> frame = pl.DataFrame({"id": ["=1+2", "w1", "'x"], "v": [-1.5, 2.0, 3.0]})
    >>> spreadsheet_safe(frame).rows()
    [("'=1+2", -1.5), ('w1', 2.0), ("''x", 3.0)]
    """
    text_kinds = (pl.String, pl.Categorical)
    columns = []
    for name, dtype in frame.schema.items():
        column = pl.col(name)
        if dtype in text_kinds or isinstance(dtype, pl.Enum):
            column = column.cast(pl.String)
            risky = _starts_with_any(column, (*FORMULA_STARTS, _QUOTE))
            column = pl.when(risky).then(pl.concat_str(pl.lit(_QUOTE), column)).otherwise(column)
        columns.append(column.alias(_escaped_text(name)))
    return frame.select(columns)


def original_text(column: pl.Expr) -> pl.Expr:
    """Undo :func:`spreadsheet_safe` on a text column read back from the CSV.

    Examples
    --------
    >>> frame = pl.DataFrame({"id": ["'=1+2", "w1", "''x", "'plain"]})
    >>> frame.select(original_text(pl.col("id")))["id"].to_list()
    ['=1+2', 'w1', "'x", "'plain"]
    """
    rest = column.str.slice(1)
    escaped = column.str.starts_with(_QUOTE) & _starts_with_any(rest, (*FORMULA_STARTS, _QUOTE))
    return pl.when(escaped).then(rest).otherwise(column)
