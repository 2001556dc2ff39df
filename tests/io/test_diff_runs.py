"""``curate diff``: rows whose fate changed between two runs, and why.

Outside reference: the expected changes are derived from the two runs' own
kept and audit files with plain Python sets and dictionaries.
"""

from __future__ import annotations

import json
from pathlib import Path

import polars as pl
import pytest
from message_checks import assert_plain_message
from review_runs import audit_of, kept_of, make_run, wine_table

from curate.cli import main, render
from curate.io.diff import diff_runs


@pytest.fixture
def two_runs(tmp_path: Path) -> tuple[Path, Path]:
    """ENN with k = 3, then copies first and ENN with k = 5, over one input with copies."""
    table = wine_table()
    pl.concat([table, table.head(6).with_columns(pl.format("{}-again", "id").alias("id"))]
              ).write_csv(tmp_path / "table.csv")
    a = make_run(tmp_path, [{"method": "enn", "k": 3, "name": "noise"}], "a")
    b = make_run(tmp_path, [{"method": "exact-duplicates", "name": "copies"},
                            {"method": "enn", "k": 5, "name": "noise"}], "b")
    return a, b


def expected_changes(a: Path, b: Path) -> dict[str, str]:
    """Row id -> kind of change, from the kept ids and the audits of the two runs."""
    why_a, why_b = audit_of(a), audit_of(b)
    out = {r: "kept -> removed" for r in kept_of(a) & set(why_b)}
    out |= {r: "removed -> kept" for r in set(why_a) & kept_of(b)}
    out |= {r: "other stage or reason" for r in set(why_a) & set(why_b) if why_a[r] != why_b[r]}
    return out


def test_diff_lists_exactly_the_changed_rows(two_runs: tuple[Path, Path]) -> None:
    a, b = two_runs
    diff = diff_runs(a, b)
    expected = expected_changes(a, b)
    assert {"kept -> removed", "removed -> kept", "other stage or reason"} <= set(
        expected.values()), "the fixture should show every kind of change"
    assert dict(zip(diff.changes["row_id"], diff.changes["change"], strict=True)) == expected
    assert diff.same_input and diff.warning is None and diff.only_in_a == diff.only_in_b == 0
    why_b = audit_of(b)
    for rec in diff.changes.iter_rows(named=True):
        if rec["b_fate"] == "removed":
            assert (rec["b_stage"], rec["b_reason"]) == why_b[rec["row_id"]]


def test_diff_cli_table_json_and_csv(two_runs: tuple[Path, Path], tmp_path: Path,
                                     capsys: pytest.CaptureFixture[str]) -> None:
    a, b = two_runs
    expected = expected_changes(a, b)
    assert main(["diff", str(a), str(b)]) == 0
    text = capsys.readouterr().out
    assert text.startswith(f"{len(expected)} of ")
    for row_id, change in expected.items():
        assert any(line.startswith(f"{row_id} ") and change in line for line in text.splitlines())
    out = tmp_path / "changes.csv"
    assert main(["diff", str(a), str(b), "--json", "--out", str(out)]) == 0
    data = json.loads(capsys.readouterr().out)
    assert {c["row_id"]: c["change"] for c in data["changes"]} == expected
    assert data["rows_compared"] == len(kept_of(a)) + len(audit_of(a))
    assert dict(zip(*pl.read_csv(out, infer_schema=False).select("row_id", "change"),
                    strict=True)) == expected
    assert main(["diff", str(a), str(b), "--out", str(out)]) == 2, "never overwrites"


def test_same_run_twice_has_no_change(two_runs: tuple[Path, Path],
                                      capsys: pytest.CaptureFixture[str]) -> None:
    a, _ = two_runs
    assert main(["diff", str(a), str(a)]) == 0
    assert capsys.readouterr().out.startswith("no row changed fate")


def test_not_a_run_folder_exits_2(two_runs: tuple[Path, Path], tmp_path: Path,
                                  capsys: pytest.CaptureFixture[str]) -> None:
    a, _ = two_runs
    (tmp_path / "empty").mkdir()
    assert main(["diff", str(a), str(tmp_path / "empty")]) == 2
    assert "is not a run folder" in capsys.readouterr().err


def test_other_input_refused_unless_forced(two_runs: tuple[Path, Path], tmp_path: Path,
                                           capsys: pytest.CaptureFixture[str]) -> None:
    """Different input files: refused (exit 2, the same id may name another row); with
    --force a warning line on stderr, and the shared ids are compared."""
    a, _ = two_runs
    wine_table().head(150).write_csv(tmp_path / "smaller.csv")
    c = make_run(tmp_path, [{"method": "enn", "k": 3, "name": "noise"}], "c",
                 table="smaller.csv")
    assert main(["diff", str(a), str(c), "--json"]) == 2
    err = capsys.readouterr().err
    assert_plain_message(err)
    assert "different inputs" in err and "--force" in err
    assert main(["diff", str(a), str(c), "--json", "--force"]) == 0
    captured = capsys.readouterr()
    assert captured.err.startswith("warning: the runs read different inputs")
    data = json.loads(captured.out)
    assert (data["same_input"], data["rows_compared"], data["only_in_b"]) == (False, 150, 0)
    assert data["only_in_a"] == len(kept_of(a)) + len(audit_of(a)) - 150


def test_other_input_without_shared_ids_exits_2(two_runs: tuple[Path, Path], tmp_path: Path,
                                                capsys: pytest.CaptureFixture[str]) -> None:
    a, _ = two_runs
    wine_table().with_columns(pl.format("x{}", "id").alias("id")).write_csv(tmp_path / "o.csv")
    d = make_run(tmp_path, [{"method": "enn", "k": 3}], "d", table="o.csv")
    assert main(["diff", str(a), str(d)]) == 2
    assert "share no row id" in capsys.readouterr().err


def test_terminal_listing_is_capped_and_points_to_out(two_runs: tuple[Path, Path],
                                                      capsys: pytest.CaptureFixture[str]) -> None:
    """A long diff lists the first rows, counts the rest and names --out; --json has all."""
    a, b = two_runs
    expected = expected_changes(a, b)
    assert len(expected) > 3, "the fixture should change more rows than the cap below"
    text = render.diff_text(diff_runs(a, b), limit=3)
    listed = [r for r in expected if any(line.startswith(f"{r} ") for line in text.splitlines())]
    assert len(listed) == 3
    assert text.splitlines()[-1].startswith(f"... and {len(expected) - 3} more rows")
    assert "--out" in text.splitlines()[-1]
