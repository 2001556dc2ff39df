"""Fixtures shared by every test folder: tiny hand-made tables, pipeline files, open data.

The folders mirror curate's packages (tests/methods for curate/methods, ...);
each has its own conftest.py for what only its tests share. Open data comes
from :mod:`open_data`: scikit-learn's bundled sets, read once per process.
Nothing is loaded at import time.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import open_data
import polars as pl
import pytest


def toml_value(value: Any) -> str:
    """Write a Python value as TOML."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, list | tuple):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    return repr(value)


def pipeline_text(input_: dict[str, Any], stages: list[dict[str, Any]],
                  extra: dict[str, dict[str, Any]] | None = None) -> str:
    """Render a small pipeline file."""
    lines = ["[input]"] + [f"{k} = {toml_value(v)}" for k, v in input_.items()]
    for section, body in (extra or {}).items():
        lines += [f"[{section}]"] + [f"{k} = {toml_value(v)}" for k, v in body.items()]
    for stage in stages:
        lines += ["[[stages]]"] + [f"{k} = {toml_value(v)}" for k, v in stage.items()]
    return "\n".join(lines) + "\n"


@pytest.fixture
def two_blobs() -> pl.DataFrame:
    """Two well separated classes on a line, one mislabel at x=0.2, and one exact copy."""
    return pl.DataFrame({
        "x": [0.0, 0.1, 0.2, 0.3, 0.4, 5.0, 5.1, 5.2, 5.3, 0.1],
        "colour": ["red", "red", "red", "red", "red", "blue", "blue", "red", "blue", "red"],
        "y": ["a", "a", "b", "a", "a", "b", "b", "b", "b", "a"],
    })


@pytest.fixture
def make_pipeline(tmp_path: Path) -> Callable[..., Path]:
    """Write a table and a pipeline file into tmp_path; return the pipeline path."""

    def make(frame: pl.DataFrame | None, stages: list[dict[str, Any]],
             input_: dict[str, Any] | None = None, extra: dict[str, dict[str, Any]] | None = None,
             name: str = "table.csv") -> Path:
        if frame is not None:
            frame.write_csv(tmp_path / name)
        settings = {"path": name, "label": "y"} | (input_ or {})
        out = {"output": {"folder": "run"}} | (extra or {})
        path = tmp_path / "pipeline.toml"
        path.write_text(pipeline_text(settings, stages, out))
        return path

    return make


@pytest.fixture
def wine() -> tuple[np.ndarray, np.ndarray]:
    """scikit-learn's bundled wine set, ``(X, y)``: read once per process, a fresh copy per test."""
    return open_data.load("wine")


@pytest.fixture
def iris() -> tuple[np.ndarray, np.ndarray]:
    """scikit-learn's bundled iris set, ``(X, y)``: read once per process, a fresh copy per test."""
    return open_data.load("iris")


@pytest.fixture
def breast_cancer() -> tuple[np.ndarray, np.ndarray]:
    """scikit-learn's bundled breast cancer set, ``(X, y)``: read once, a fresh copy per test."""
    return open_data.load("breast_cancer")


def pytest_ignore_collect(collection_path: Path) -> bool | None:
    """Collect no conftest.py as a module of doctests: each folder has one, and several
    modules all named ``conftest`` would clash (they hold fixtures, not doctests)."""
    return True if collection_path.name == "conftest.py" else None
