"""The review CSV opens in a spreadsheet as text, never as formulas, and reads back intact.

Outside references: the OWASP guidance on CSV injection (owasp.org, "CSV Injection"):
cells that start with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return are
formulas to a spreadsheet; prefixing a single quote makes them text. The list is
written out here from that page, not taken from curate. Python's csv module reads
the file as a spreadsheet would. Wilson 1972's editing rule decides every row from
the same full neighbourhood at once, so protecting every removed row leaves every
row kept on the rerun.
"""

from __future__ import annotations

import csv
from pathlib import Path

import polars as pl
from review_runs import kept_of, make_run, wine_table

from curate.cli import main

OWASP_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
# Every start OWASP names, a quote (the escape's own mark) and a plain id.
PREFIXES = ("=", "+", "-", "@", "\t", "\r", "'", "")


def risky_table() -> pl.DataFrame:
    """Wine with ids and labels a spreadsheet would run, and a free-text note column."""
    frame = wine_table()
    ids = [f"{PREFIXES[i % len(PREFIXES)]}HYPERLINK(w{i:03d})" for i in range(frame.height)]
    return frame.with_columns(pl.Series("id", ids),
                              ("@" + pl.col("y")).alias("y"),
                              pl.Series("note", ["=1+2" if i % 2 else "-ok" for i in range(len(ids))]))


def expected_cell(text: str) -> str:
    """OWASP's escape, and a quote before a leading quote too so that it can be undone
    (README: the review CSV)."""
    return "'" + text if text.startswith((*OWASP_FORMULA_STARTS, "'")) else text


def read_sheet(path: Path) -> list[dict[str, str]]:
    with path.open(newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


def test_review_cells_are_escaped_and_protect_reads_them_back(tmp_path: Path) -> None:
    table = risky_table()
    table.write_csv(tmp_path / "table.csv")
    stages = [{"method": "enn", "k": 3, "name": "noise", "max_removed_share": 1.0}]
    first = make_run(tmp_path, stages, "first", ignore=["note"])
    review = tmp_path / "review.csv"
    assert main(["review", "--run", str(first), "--out", str(review)]) == 0
    rows = read_sheet(review)
    assert rows, "the run removed rows to review"
    source = {expected_cell(r["id"]): r for r in table.to_dicts()}
    for row in rows:
        for name, cell in row.items():
            assert not cell.startswith(OWASP_FORMULA_STARTS), (name, cell)
        original = source[row["row_id"]]
        assert row["y"] == "'" + original["y"]
        assert row["note"] == "'" + original["note"]
    # The reviewer keeps every row; the protected rerun must then keep them all.
    for row in rows:
        row["decision"] = "keep"
    with review.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    again = make_run(tmp_path, stages, "again", ignore=["note"], protect_file="review.csv")
    assert kept_of(again) == set(table["id"].to_list())
    spared = pl.read_parquet(again / "protected.parquet")["row_id"].to_list()
    assert sorted(spared) == sorted(source[r["row_id"]]["id"] for r in rows)


def test_diff_csv_is_escaped_too(tmp_path: Path) -> None:
    """The other CSV curate writes for people, ``curate diff --out``, follows the same rule."""
    table = risky_table()
    table.write_csv(tmp_path / "table.csv")
    one = make_run(tmp_path, [{"method": "enn", "k": 3, "name": "=one", "max_removed_share": 1.0}],
                   "one", ignore=["note"])
    two = make_run(tmp_path, [{"method": "enn", "k": 5, "name": "+two", "max_removed_share": 1.0}],
                   "two", ignore=["note"])
    out = tmp_path / "diff.csv"
    assert main(["diff", str(one), str(two), "--out", str(out)]) == 0
    rows = read_sheet(out)
    assert rows, "k = 3 and k = 5 remove different rows of the flipped wine set"
    for row in rows:
        for name, cell in row.items():
            assert not cell.startswith(OWASP_FORMULA_STARTS), (name, cell)
    assert {r["a_stage"] for r in rows} <= {"'=one", ""}
