"""The pieces every report page is built of: table cells that name their JSON source, tables,
sections and embedded images.

A number printed in a cell with a ``key`` carries that key path and its exact
value (``data-key``, ``data-value``), so a test or a reader's tool can check
the page against ``summary.json`` or ``evaluation.json``.
"""

from __future__ import annotations

import html
from collections.abc import Sequence
from typing import Any

import numpy as np

__all__ = ["cell", "image", "marked", "section", "table"]


def _text(value: Any) -> str:
    if isinstance(value, bool) or value is None:
        return "yes" if value is True else "no" if value is False else "-"
    if isinstance(value, float):
        return "-" if np.isnan(value) else f"{value:.4g}" if abs(value) < 1e4 else f"{value:,.0f}"
    if isinstance(value, int):
        return f"{value:,}"
    return str(value)


def _percent(value: float) -> str:
    """A share as a percentage, with a second decimal for shares under 1%.

    Examples
    --------
    >>> _percent(0.008065), _percent(0.5), _percent(float("nan"))
    ('0.81%', '50.0%', '-')
    """
    if np.isnan(value):
        return "-"
    return f"{value:.2%}" if 0 < abs(value) < 0.01 else f"{value:.1%}"


def cell(value: Any, key: str | None = None, percent: bool = False) -> str:
    """One table cell; with ``key``, the cell names its source and holds the exact value.

    ``percent`` shows a share as a percentage (the exact value stays a share).

    Examples
    --------
    >>> cell(0.123456, "results.0.accuracy")
    '<td class="n" data-key="results.0.accuracy" data-value="0.123456">0.1235</td>'
    >>> cell(0.25, percent=True), cell("enn")
    ('<td class="n">25.0%</td>', '<td>enn</td>')
    """
    number = isinstance(value, int | float) and not isinstance(value, bool)
    attrs = ' class="n"' if number else ""
    if key is not None:
        attrs += f' data-key="{html.escape(key)}" data-value="{html.escape(str(value))}"'
    text = _percent(float(value)) if percent and number else _text(value)
    return f"<td{attrs}>{html.escape(text)}</td>"


def table(head: Sequence[str], rows: Sequence[Sequence[str]], wide: bool = False) -> str:
    """An HTML table from header texts and rows of ready cells (see :func:`cell`).

    An empty ``head`` gives a table without a header row (a list of facts);
    ``wide`` sets a smaller type so that many columns fit the page.

    Examples
    --------
    >>> table(["a"], [[cell(1)]])
    '<table><thead><tr><th>a</th></tr></thead><tbody><tr><td class="n">1</td></tr></tbody></table>'
    >>> table([], [[cell("x")]])
    '<table><tbody><tr><td>x</td></tr></tbody></table>'
    """
    top = "".join(f"<th>{html.escape(h)}</th>" for h in head)
    body = "".join("<tr>" + "".join(r) + "</tr>" for r in rows)
    opening = '<table class="wide">' if wide else "<table>"
    header = f"<thead><tr>{top}</tr></thead>" if head else ""
    return f"{opening}{header}<tbody>{body}</tbody></table>"


def section(ident: str, title: str, body: str) -> str:
    """One titled section of the page, with an id a link or a test can find.

    Examples
    --------
    >>> section("flow", "Stage by stage", "<p>x</p>").splitlines()
    ['<section id="flow"><h2>Stage by stage</h2>', '<p>x</p>', '</section>']
    """
    return f'<section id="{ident}"><h2>{html.escape(title)}</h2>\n{body}\n</section>'


def image(uri: str, alt: str) -> str:
    """An embedded picture (a ``data:`` URI) with its text alternative.

    Examples
    --------
    >>> image("data:image/png;base64,AA==", "a <plot>")
    '<img src="data:image/png;base64,AA==" alt="a &lt;plot&gt;">'
    """
    return f'<img src="{uri}" alt="{html.escape(alt)}">'


def marked(text: str) -> str:
    """Escape ``text`` for HTML, turning `quoted commands` into code.

    Examples
    --------
    >>> marked("run `curate evaluate` <first>")
    'run <code>curate evaluate</code> &lt;first&gt;'
    """
    parts = html.escape(text).split("`")
    return "".join(f"<code>{p}</code>" if i % 2 else p for i, p in enumerate(parts))
