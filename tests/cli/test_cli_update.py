"""`curate update` end to end: the updated run folder, its summary, and its errors.

Hand-computed on the two-blob table of tests/conftest.py: the new rows lie
inside the run's ranges and levels, so the run's fitted space is also the
space of a full run on all rows, and `curate run` on old + new rows is the
oracle for the kept rows and the audit (CHECKS.md, "Updates"). Exit codes as
README.md states them.
"""

from __future__ import annotations

import json
import shutil

import polars as pl

from curate.cli import main

STAGES = [{"name": "copies", "method": "exact-duplicates"},
          {"name": "mislabels", "method": "enn", "k": 3}]
NEW = pl.DataFrame({"x": [0.3, 5.15, 0.25], "colour": ["red", "blue", "red"],
                    "y": ["a", "a", "a"]})


def _first_run(make_pipeline, table, capsys, report=False, **input_):
    path = make_pipeline(table, STAGES, input_=input_ or None,
                         extra={"output": {"folder": "run", "report": report}})
    assert main(["run", str(path), "--quiet"]) == 0
    capsys.readouterr()
    return path


def test_update_writes_the_run_of_old_and_new_rows(make_pipeline, two_blobs, capsys):
    """Row 10 copies row 3 (removed, kept_as 3); row 11 ('a' among 'b' rows) is outvoted;
    row 12 stays; everything equals `curate run` on the 13 rows."""
    path = _first_run(make_pipeline, two_blobs, capsys, report=True)
    NEW.write_csv(path.parent / "new.csv")
    code = main(["update", str(path), "--run", str(path.parent / "run"), "--new",
                 str(path.parent / "new.csv"), "--out", str(path.parent / "run2"), "--json"])
    out = capsys.readouterr()
    assert code == 0 and "stage 2/2" in out.err
    summary = json.loads(out.out)
    facts = summary["update"]
    assert facts["new_rows"] == 3 and facts["equals_full_run"] is True
    assert facts["rows_outside_fitted_ranges"] == 0
    assert [s["mode"] for s in facts["stages"]] == ["incremental", "incremental"]
    run2 = path.parent / "run2"
    audit = pl.read_parquet(run2 / "audit.parquet")
    reasons = dict(zip(audit["row_id"], audit["reason"], strict=True))
    assert reasons[10] == "exact-copy" and reasons[11] == "knn-disagrees" and 12 not in reasons
    assert audit.filter(pl.col("row_id") == 10)["kept_as"].to_list() == [3]
    assert (run2 / "update" / "state.json").exists() and (run2 / "report.html").exists()
    pl.concat([two_blobs, NEW]).write_csv(path.parent / "table.csv")
    assert main(["run", str(path), "--out", str(path.parent / "full"), "--quiet"]) == 0
    full = pl.read_parquet(path.parent / "full" / "audit.parquet").sort("row_id")
    assert audit.sort("row_id").equals(full)


def test_update_says_how_it_went(make_pipeline, two_blobs, capsys):
    """Without --json: per stage, its mode and how many old rows it judged again."""
    path = _first_run(make_pipeline, two_blobs, capsys)
    NEW.write_csv(path.parent / "new.csv")
    assert main(["update", str(path), "--run", str(path.parent / "run"), "--new",
                 str(path.parent / "new.csv"), "--out", str(path.parent / "run2")]) == 0
    err = capsys.readouterr().err
    assert "update: 3 new rows added to 10" in err
    assert "mislabels (enn): incremental" in err and "old rows judged again" in err


def test_clashing_ids_exit_3_naming_them(make_pipeline, two_blobs, capsys):
    table = two_blobs.with_columns(pl.Series("rid", [f"r{i}" for i in range(10)]))
    path = _first_run(make_pipeline, table, capsys, id="rid")
    NEW.with_columns(pl.Series("rid", ["r4", "n1", "r7"])).write_csv(path.parent / "new.csv")
    code = main(["update", str(path), "--run", str(path.parent / "run"), "--new",
                 str(path.parent / "new.csv"), "--out", str(path.parent / "run2")])
    err = capsys.readouterr().err
    assert code == 3 and "r4" in err and "r7" in err and "n1" not in err
    assert not (path.parent / "run2").exists()


def test_run_folder_without_update_state_exit_2(make_pipeline, two_blobs, capsys):
    path = _first_run(make_pipeline, two_blobs, capsys)
    shutil.rmtree(path.parent / "run" / "update")
    NEW.write_csv(path.parent / "new.csv")
    code = main(["update", str(path), "--run", str(path.parent / "run"), "--new",
                 str(path.parent / "new.csv"), "--out", str(path.parent / "run2")])
    err = capsys.readouterr().err
    assert code == 2 and "rerun" in err and "hint:" in err


def test_refit_and_where_the_output_may_go(make_pipeline, two_blobs, capsys):
    """--refit is a full run (said in the summary); the output may not be the run folder the
    update reads; an existing run folder elsewhere needs --overwrite."""
    path = _first_run(make_pipeline, two_blobs, capsys)
    NEW.write_csv(path.parent / "new.csv")
    base = ["update", str(path), "--run", str(path.parent / "run"), "--new",
            str(path.parent / "new.csv"), "--refit"]
    assert main([*base, "--out", str(path.parent / "run")]) == 2
    assert "is the run folder" in capsys.readouterr().err
    assert main([*base, "--out", str(path.parent / "run2"), "--quiet"]) == 0
    assert main([*base, "--out", str(path.parent / "run2")]) == 2
    assert "already exists" in capsys.readouterr().err
    assert main([*base, "--out", str(path.parent / "run2"), "--overwrite", "--json"]) == 0
    facts = json.loads(capsys.readouterr().out)["update"]
    assert facts["refit"] is True and facts["stages"][0]["mode"] == "full run (refit)"
