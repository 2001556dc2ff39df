"""Protected rows: reading the reviewer's marks, and the review round trip through a rerun.

Outside references: Wilson 1972's editing rule decides every row from the
same full neighbourhood at once, so protecting a row (it stays, and it was
a neighbour anyway) changes no other row's fate; the expected run is derived
from the first run's audit with plain Python sets.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import polars as pl
import pytest
from review_runs import audit_of, kept_of, make_run, wine_table

from curate.cli import main
from curate.errors import UsageError
from curate.io.review import protected_ids


def write(path: Path, text: str) -> Path:
    path.write_text(text, encoding="utf-8")
    return path


def test_review_table_marks(tmp_path: Path) -> None:
    """keep (any case, spaces around) protects; remove and empty do not; ids stay text."""
    path = write(tmp_path / "r.csv", "row_id,decision,note\n007,keep,x\n8, KEEP ,\n9,remove,\n"
                                     "10,,\n007,keep,twice\n")
    assert protected_ids(path) == ["007", "8"]


def test_semicolon_separated_sheet_and_byte_order_mark(tmp_path: Path) -> None:
    """Spreadsheets where the comma is the decimal mark save with semicolons (and a BOM)."""
    path = tmp_path / "r.csv"
    path.write_bytes("\ufeffrow_id;decision;x\nA1;keep;0,5\nA2;;0,7\n".encode())
    assert protected_ids(path) == ["A1"]


def test_plain_list_of_ids(tmp_path: Path) -> None:
    """One id per line; blank lines and # comments are skipped."""
    path = write(tmp_path / "ids.txt", "# confirmed by the inspectors\nP-17\n\n  P-20  \nP-17\n")
    assert protected_ids(path) == ["P-17", "P-20"]


@pytest.mark.parametrize("text, message", [
    ("row_id,note\n1,x\n", "no 'decision' column"),
    ("id,decision\n1,keep\n", "no 'row_id' column"),
    ("row_id,decision\n1,maybe\n2,keep\n", "decision 'maybe' is not one of keep, remove or empty"),
    ("row_id,decision\n,keep\n", "a row marked keep has no row_id"),
])
def test_unusable_tables_say_what_to_fix(tmp_path: Path, text: str, message: str) -> None:
    with pytest.raises(UsageError, match=message):
        protected_ids(write(tmp_path / "r.csv", text))


def test_missing_file(tmp_path: Path) -> None:
    with pytest.raises(UsageError, match="protect file .*nothing.csv does not exist"):
        protected_ids(tmp_path / "nothing.csv")


def test_review_round_trip(tmp_path: Path) -> None:
    """Protect two removed rows through the review CSV, rerun: they are kept, every other row
    has the fate it had, and protected.parquet says the stage wanted those two out."""
    wine_table().write_csv(tmp_path / "table.csv")
    stages = [{"method": "enn", "k": 3, "name": "noise"}]
    first = make_run(tmp_path, stages, "first")
    review = tmp_path / "review.csv"
    assert main(["review", "--run", str(first), "--out", str(review)]) == 0
    with review.open(newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    chosen = [rows[0]["row_id"], rows[-1]["row_id"]]
    for row in rows:
        row["decision"] = "keep" if row["row_id"] in chosen else ""
    with review.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)

    second = make_run(tmp_path, stages, "second", protect_file="review.csv")
    before = audit_of(first)
    assert kept_of(second) == kept_of(first) | set(chosen)
    assert audit_of(second) == {r: why for r, why in before.items() if r not in chosen}
    summary = json.loads((second / "summary.json").read_text())
    assert summary["protected"] == 2
    spared = pl.read_parquet(second / "protected.parquet")
    assert sorted(str(r) for r in spared["row_id"]) == sorted(chosen)
    for rec in spared.iter_rows(named=True):
        assert (rec["stage"], rec["reason"]) == before[str(rec["row_id"])]
