"""The run report: every section present, numbers equal summary.json, images embedded, HTML sane.

Outside references: Python's html.parser (the page parses as HTML), the PNG
signature (see report_fixtures) for embedded pictures, and json (summary.json)
for the numbers the page must repeat.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from report_fixtures import Page, check_images, keyed_numbers_match

from curate.api import run
from curate.demo import data as demo_data
from curate.report.html import CAUTIONS

SCHEMA = Path(__file__).resolve().parents[2] / "schemas" / "readings.py"
SECTIONS = {"headline", "flow", "classes", "projection", "distances", "cautions"}


@pytest.fixture(scope="module")
def run_folder(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("report")
    demo_data.write(folder, rows=600, seed=5)
    run({"input": {"path": "readings.csv", "label": "condition", "id": "reading_id",
                   "ignore": ["note"], "schema": f"{SCHEMA}:Readings", "on_invalid": "quarantine"},
         "stages": [{"name": "copies", "method": "exact-duplicates"},
                    {"name": "conflicts", "method": "conflicting-duplicates"},
                    {"name": "near copies", "method": "near-duplicates", "radius": 0.02},
                    {"name": "mislabels", "method": "enn", "k": 3,
                     "max_removed_share": 0.9}],
         "run": {"seed": 3}}, base=folder, out=folder / "run", trust_code=[SCHEMA.parent])
    return folder / "run"


@pytest.fixture(scope="module")
def page(run_folder: Path) -> Page:
    return Page.read(run_folder / "report.html")


def test_every_section_is_present_and_cautions_are_kept(page: Page) -> None:
    assert set(page.sections) >= SECTIONS
    assert page.sections[-1] == "cautions"
    text = " ".join(" ".join(page.text).split())
    flowing = " ".join("".join(page.text).split())  # inline tags do not split words
    for caution in CAUTIONS:
        # Quoted commands are set as code, without the backticks of plain text.
        assert " ".join(caution.replace("`", "").split()) in flowing
    assert "`" not in text
    # The pipeline has a near-duplicates stage with a radius: the distances section uses it.
    assert "share within the near-copy radius" in text


def test_numbers_equal_summary_json(page: Page, run_folder: Path) -> None:
    summary = json.loads((run_folder / "summary.json").read_text())
    expected = {"rows_in", "rows_kept", "rows_removed", "rows_quarantined", "seconds",
                "total_seconds", "seed"}
    expected |= {f"by_reason.{r}" for r in summary["by_reason"]}
    expected |= {f"classes_in.{c}" for c in summary["classes_in"]}
    expected |= {f"stages.{i}.{k}" for i in range(len(summary["stages"]))
                 for k in ("rows_in", "removed", "kept", "seconds")}
    assert expected <= set(page.keyed), sorted(expected - set(page.keyed))
    keyed_numbers_match(page, {"": summary})
    # The demo's quarantined rows and removed rows are real, so the checks above have bite.
    assert summary["rows_quarantined"] > 0 and summary["rows_removed"] > summary["rows_quarantined"]


def test_images_are_embedded_pngs_and_nothing_is_fetched(page: Page) -> None:
    assert len(page.images) >= 4  # flow, class balance, projection, distances
    check_images(page)


def test_tables_read_well(page: Page, run_folder: Path) -> None:
    """No empty header rows, shares as percentages, and both times said (common practice)."""
    markup = (run_folder / "report.html").read_text(encoding="utf-8")
    assert "<th></th>" not in markup
    shares = [text for key, (_, text) in page.keyed.items() if key.startswith("classes_kept")]
    assert shares
    summary = json.loads((run_folder / "summary.json").read_text())
    assert summary["total_seconds"] >= summary["seconds"]
    assert "whole command (s)" in " ".join(page.text) and "stages (s)" in " ".join(page.text)
    assert "white-space:nowrap" in markup  # numbers, p-values among them, never wrap


def test_kept_rows_stay_visible_under_removed_markers() -> None:
    """A kept row under 300 removed rows at the same spot still shows most of its colour: the
    pixels of its colour, decoded with matplotlib's PNG reader, compared with the same picture
    where the removed rows lie far away."""
    import base64
    import io

    import numpy as np
    from matplotlib.image import imread

    from curate.report.plots import _KEPT_DOT, projection_plot

    target = np.array([int(_KEPT_DOT[i:i + 2], 16) / 255 for i in (1, 3, 5)])

    def kept_pixels(crowd_at: float) -> int:
        crowd = np.random.default_rng(0).normal(scale=0.02, size=(300, 2)) + crowd_at
        xy = np.vstack([[0.0, 0.0], crowd, [[3.0, 3.0]]])
        reasons = np.array(["", *["knn-disagrees"] * 300, "exact-copy"])
        uri = projection_plot(xy, reasons, [0.6, 0.3])
        image = imread(io.BytesIO(base64.b64decode(uri.split(",", 1)[1])), format="png")
        return int((np.abs(image[..., :3] - target).max(axis=-1) < 0.1).sum())

    alone, crowded = kept_pixels(3.0), kept_pixels(0.0)
    assert alone > 0 and crowded > 0.6 * alone
