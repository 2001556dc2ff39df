"""The README's Python snippet works after `make demo`, as written.

The snippet runs ``curate.run("pipelines/pumps.toml")`` from the repository root. Here a
temporary folder stands in for a fresh clone after `make demo`: the repository's own
``pipelines/`` and ``schemas/`` files, and the demo data where the Makefile's ``demo`` target
writes it (its ``--out`` folder, ``data/readings.csv`` inside). Outside reference: the
README's text and the Makefile, read as a user reads them; the result is checked against
the demo's ground-truth file (every re-sent row it lists is removed), not against curate.
"""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import polars as pl
import pytest

from curate.demo import data as demo_data

ROOT = Path(__file__).resolve().parents[2]


def readme_snippet() -> str:
    """The README's first Python block, up to the Sampler part (which needs the user's X, y)."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    block = re.search(r"```python\n(.*?)```", text, re.S)
    assert block is not None, "README.md has a Python example"
    return block.group(1).split("from curate import Sampler")[0]


def make_demo_options() -> tuple[str, int]:
    """The ``--out`` folder and ``--rows`` count that `make demo` passes to `curate demo`."""
    makefile = (ROOT / "Makefile").read_text(encoding="utf-8")
    out = re.search(r"curate demo .*--out (\S+)", makefile)
    rows = re.search(r"^ROWS \?= (\d+)", makefile, re.M)
    assert out is not None and rows is not None
    return out.group(1), int(rows.group(1))


def test_readme_python_snippet_runs_after_make_demo(tmp_path: Path,
                                                    monkeypatch: pytest.MonkeyPatch) -> None:
    for folder in ("pipelines", "schemas"):
        shutil.copytree(ROOT / folder, tmp_path / folder)
    out, rows = make_demo_options()
    # `curate demo --out DIR` writes its data with demo_data.write(DIR / "data", seed=7)
    paths = demo_data.write(tmp_path / out / "data", rows=rows, seed=7)
    monkeypatch.chdir(tmp_path)
    scope: dict[str, object] = {}
    exec(compile(readme_snippet(), "README.md", "exec"), scope)  # the snippet, as written
    result = scope["result"]
    kept, audit = result.kept, result.audit  # type: ignore[attr-defined]
    assert kept.height > 0 and not (tmp_path / "runs").exists(), "nothing written"
    truth = pl.read_csv(paths["truth"])
    resent = set(truth.filter(pl.col("fault") == "re-sent")["reading_id"].to_list())
    assert resent and resent <= set(audit["row_id"].to_list())
