"""Reading a report page back: sections, embedded images, and cells keyed to JSON numbers.

Outside references: Python's html.parser (the page must parse as HTML) and the
PNG signature of the PNG specification (ISO/IEC 15948, section 5.2: the eight
bytes 89 50 4E 47 0D 0A 1A 0A) for embedded pictures.
"""

from __future__ import annotations

import base64
import math
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import pytest

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


class Page(HTMLParser):
    """Collects section ids, images, keyed cells (key -> (data-value, shown text)), tags, text."""

    def __init__(self) -> None:
        super().__init__()
        self.sections: list[str] = []
        self.images: list[str] = []
        self.keyed: dict[str, tuple[str, list[str]]] = {}
        self.tags: set[str] = set()
        self.links: list[str] = []
        self.text: list[str] = []
        self._open: str | None = None

    @classmethod
    def read(cls, path: Path) -> Page:
        page = cls()
        page.feed(path.read_text(encoding="utf-8"))
        page.close()
        return page

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = dict(attrs)
        self.tags.add(tag)
        if tag == "section":
            self.sections.append(a["id"] or "")
        if tag == "img":
            self.images.append(a["src"] or "")
        for name in ("href", "src"):
            if a.get(name) and not str(a[name]).startswith("data:"):
                self.links.append(str(a[name]))
        if "data-key" in a:
            self._open = a["data-key"] or ""
            self.keyed[self._open] = (a["data-value"] or "", [])

    def handle_endtag(self, tag: str) -> None:
        if tag == "td":
            self._open = None

    def handle_data(self, data: str) -> None:
        self.text.append(data)
        if self._open is not None:
            self.keyed[self._open][1].append(data)


def lookup(tree: Any, path: str) -> Any:
    """Follow a dotted key path; dictionary keys may themselves hold dots."""
    while path:
        if isinstance(tree, list):
            head, _, path = path.partition(".")
            tree = tree[int(head)]
            continue
        key = max((k for k in tree if path == k or path.startswith(k + ".")), key=len)
        tree, path = tree[key], path[len(key) + 1:]
    return tree


def keyed_numbers_match(page: Page, sources: dict[str, Any], skip: str | None = None) -> None:
    """Every keyed cell equals its source number; ``sources`` maps a key prefix to a tree.

    Keys ending in ``skip`` (such as timings of another run) are not compared.
    """
    assert page.keyed
    for key, (value, shown) in page.keyed.items():
        if skip is not None and key.endswith(skip):
            continue
        prefix = max((p for p in sources if key.startswith(p)), key=len)
        truth = lookup(sources[prefix], key[len(prefix):])
        text = "".join(shown).replace(",", "")
        if truth is None:
            assert text == "-", key
            continue
        assert float(value) == pytest.approx(float(truth), rel=1e-12), key
        # The visible text is the same number, rounded for reading (shares as percentages,
        # to a tenth of a percent at least).
        if text.endswith("%"):
            assert float(text[:-1]) / 100 == pytest.approx(float(truth), abs=5e-4), key
            continue
        assert float(text) == pytest.approx(float(truth), rel=1e-3, abs=1e-4), key
        assert math.isfinite(float(text))


def check_images(page: Page) -> None:
    """Every image is an embedded PNG, nothing is fetched, and no script runs."""
    for src in page.images:
        head, _, data = src.partition(",")
        assert head == "data:image/png;base64"
        assert base64.b64decode(data)[:8] == PNG_SIGNATURE
    assert page.links == []
    assert "script" not in page.tags
