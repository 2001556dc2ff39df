"""``curate review``: the removed rows, their reasons and evidence, and an empty decision column.

Outside references: the run folder's own files read back with polars (kept,
removed and audit tables), Python's csv module reading the written file as a
spreadsheet would, and plain Python for the expected cells.
"""

from __future__ import annotations

import csv
from pathlib import Path

import polars as pl
import pytest
from review_runs import make_run, wine_table

from curate.cli import main
from curate.io.review import review_table, write_review


@pytest.fixture
def enn_run(tmp_path: Path) -> Path:
    wine_table().write_csv(tmp_path / "table.csv")
    return make_run(tmp_path, [{"method": "enn", "k": 3, "name": "noise"}], "run")


def test_review_csv_holds_every_removed_row_with_its_evidence(enn_run: Path,
                                                               tmp_path: Path) -> None:
    """One CSV row per audit row: same id, stage, reason and detail, the neighbour lists
    written as "; "-joined text, the input's own values, and an empty decision."""
    out = tmp_path / "review.csv"
    assert main(["review", "--run", str(enn_run), "--out", str(out)]) == 0
    with out.open(newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    audit = pl.read_parquet(enn_run / "audit.parquet")
    removed = {r["row_id"]: r for r in pl.read_parquet(enn_run / "removed.parquet").to_dicts()}
    assert len(rows) == audit.height == len(removed) > 0
    for row, rec in zip(rows, audit.to_dicts(), strict=True):
        assert row["row_id"] == rec["row_id"] and row["decision"] == ""
        assert (row["stage"], row["reason"], row["detail"]) == (rec["stage"], rec["reason"],
                                                                rec["detail"])
        assert row["neighbour_ids"] == "; ".join(rec["neighbour_ids"])
        assert row["neighbour_labels"] == "; ".join(rec["neighbour_labels"])
        assert [float(d) for d in row["neighbour_distances"].split("; ")] == pytest.approx(
            rec["neighbour_distances"], rel=1e-3)
        source = removed[rec["row_id"]]
        assert row["y"] == source["y"]
        assert float(row["f0"]) == pytest.approx(source["f0"])


def test_review_never_overwrites_unless_told(enn_run: Path, tmp_path: Path,
                                             capsys: pytest.CaptureFixture[str]) -> None:
    """An existing review file stays as it was (exit 2), unless --overwrite; a file curate did
    not write is never replaced."""
    out = tmp_path / "review.csv"
    # A reviewer's copy saved by a spreadsheet that writes semicolons (common practice, no source).
    out.write_text("row_id;decision;stage\n3;keep;mislabels\n")
    assert main(["review", "--run", str(enn_run), "--out", str(out)]) == 2
    assert "already exists" in capsys.readouterr().err
    assert out.read_text() == "row_id;decision;stage\n3;keep;mislabels\n"
    assert main(["review", "--run", str(enn_run), "--out", str(out), "--overwrite"]) == 0
    assert out.read_text().startswith("row_id,decision,")
    notes = tmp_path / "notes.csv"
    notes.write_text("a reviewer's own notes\n")
    assert main(["review", "--run", str(enn_run), "--out", str(notes), "--overwrite"]) == 2
    err = capsys.readouterr().err
    assert "may not replace" in err and "a reviewer's own notes" in err
    assert notes.read_text() == "a reviewer's own notes\n"


def test_review_of_a_folder_that_is_not_a_run(tmp_path: Path,
                                              capsys: pytest.CaptureFixture[str]) -> None:
    """Exit 2 and a message naming the folder and the missing file."""
    assert main(["review", "--run", str(tmp_path), "--out", str(tmp_path / "r.csv")]) == 2
    err = capsys.readouterr().err
    assert f"{tmp_path} is not a run folder" in err and "kept.parquet" in err
    assert not (tmp_path / "r.csv").exists()


def test_input_columns_named_like_review_columns_are_kept_apart(tmp_path: Path) -> None:
    """An input column called "reason" stays, as "reason (input)", beside the audit's reason."""
    table = wine_table().with_columns(pl.lit("sensor swap").alias("reason"))
    table.write_csv(tmp_path / "table.csv")
    folder = make_run(tmp_path, [{"method": "enn", "k": 3}], "run", ignore=["reason"])
    review = review_table(folder)
    assert set(review["reason (input)"]) == {"sensor swap"}
    assert "sensor swap" not in set(review["reason"])


def test_a_run_that_removed_nothing_gives_a_header_only_file(tmp_path: Path) -> None:
    """No removed row: the CSV has its header and no row."""
    wine_table(flip=0.0).write_csv(tmp_path / "table.csv")
    folder = make_run(tmp_path, [{"method": "exact-duplicates"}], "run")
    assert write_review(folder, tmp_path / "review.csv") == (0, 0)
    lines = (tmp_path / "review.csv").read_text().splitlines()
    assert len(lines) == 1 and lines[0].startswith("row_id,decision,stage,")
