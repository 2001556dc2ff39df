"""Fixtures of the architecture tests: the shape of the curate package itself.

Outside references: the Python language reference (``__all__``, PEP 562), the
``ast`` module for reading imports, and ``python -X importtime`` for what the
command imports at start.
"""

from __future__ import annotations

from pathlib import Path

import pytest


@pytest.fixture(scope="session")
def package_root() -> Path:
    """The folder of the curate package whose modules the tests read."""
    import curate

    return Path(curate.__file__).parent
