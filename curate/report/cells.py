"""The report's building blocks: table cells that name their source, tables and images."""

from __future__ import annotations

import html
from collections.abc import Sequence
from typing import Any

import numpy as np

__all__ = ["cell", "image", "table"]


def _text(value: Any) -> str:
    if isinstance(value, bool) or value is None:
        return "yes" if value is True else "no" if value is False else "-"
    if isinstance(value, float):
        return "-" if np.isnan(value) else f"{value:.4g}" if abs(value) < 1e4 else f"{value:,.0f}"
    if isinstance(value, int):
        return f"{value:,}"
    return str(value)


def cell(value: Any, key: str | None = None) -> str:
    """One table cell; with ``key``, the cell names its source and holds the exact value.

    Examples
    --------
    >>> cell(0.123456, "results.0.accuracy")
    '<td class="n" data-key="results.0.accuracy" data-value="0.123456">0.1235</td>'
    >>> cell("enn")
    '<td>enn</td>'
    """
    number = isinstance(value, int | float) and not isinstance(value, bool)
    attrs = ' class="n"' if number else ""
    if key is not None:
        attrs += f' data-key="{html.escape(key)}" data-value="{html.escape(str(value))}"'
    return f"<td{attrs}>{html.escape(_text(value))}</td>"


def table(head: Sequence[str], rows: Sequence[Sequence[str]]) -> str:
    """An HTML table from header texts and rows of ready cells (see :func:`cell`).

    Examples
    --------
    >>> table(["a"], [[cell(1)]])
    '<table><thead><tr><th>a</th></tr></thead><tbody><tr><td class="n">1</td></tr></tbody></table>'
    """
    top = "".join(f"<th>{html.escape(h)}</th>" for h in head)
    body = "".join("<tr>" + "".join(r) + "</tr>" for r in rows)
    return f"<table><thead><tr>{top}</tr></thead><tbody>{body}</tbody></table>"


def image(uri: str, alt: str) -> str:
    """An ``<img>`` of a data URI with its alternative text."""
    return f'<img src="{uri}" alt="{html.escape(alt)}">'
