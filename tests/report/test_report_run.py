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
         "run": {"seed": 3}}, base=folder, out=folder / "run")
    return folder / "run"


@pytest.fixture(scope="module")
def page(run_folder: Path) -> Page:
    return Page.read(run_folder / "report.html")


def test_every_section_is_present_and_cautions_are_kept(page: Page) -> None:
    assert set(page.sections) >= SECTIONS
    assert page.sections[-1] == "cautions"
    text = " ".join(" ".join(page.text).split())
    for caution in CAUTIONS:
        assert " ".join(caution.split()) in text
    # The pipeline has a near-duplicates stage with a radius: the distances section uses it.
    assert "share within the near-copy radius" in text


def test_numbers_equal_summary_json(page: Page, run_folder: Path) -> None:
    summary = json.loads((run_folder / "summary.json").read_text())
    expected = {"rows_in", "rows_kept", "rows_removed", "rows_quarantined", "seconds", "seed"}
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
