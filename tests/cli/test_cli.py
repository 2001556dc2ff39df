"""The `curate` command end to end: run, why, check, methods, demo.

Run-folder contract as DEVELOPERS.md states it ("Contracts the tests hold"); file contents
read back with polars (outside reference).
"""

from __future__ import annotations

import json

import numpy as np
import polars as pl

from curate.cli import main
from curate.methods import METHODS

STAGES = [{"name": "copies", "method": "exact-duplicates"},
          {"name": "mislabels", "method": "enn", "k": 3}]


def test_run_writes_the_contract_files(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, STAGES)
    assert main(["run", str(path), "--json"]) == 0
    out = capsys.readouterr()
    summary = json.loads(out.out)
    assert "stage 1/2" in out.err  # progress goes to stderr
    run = path.parent / "run"
    assert {p.name for p in run.iterdir()} >= {"kept.parquet", "removed.parquet", "audit.parquet",
                                                "summary.json", "report.html"}
    assert summary == json.loads((run / "summary.json").read_text())
    for key in ("rows_in", "rows_kept", "rows_removed", "stages", "input_sha256",
                "pipeline_sha256", "seed", "versions"):
        assert key in summary
    for stage in summary["stages"]:
        assert {"name", "method", "rows_in", "removed", "by_reason", "seconds"} <= set(stage)
    # hand-computed: row 9 copies row 1; row 2 (x=0.2, 'b') sits among 'a' rows; row 7 likewise
    audit = pl.read_parquet(run / "audit.parquet")
    assert dict(zip(audit["row_id"], audit["reason"], strict=True)) == {
        9: "exact-copy", 2: "knn-disagrees", 7: "knn-disagrees"}
    kept = pl.read_parquet(run / "kept.parquet")
    assert kept.columns == [*two_blobs.columns, "row_id"]


def test_quiet_run_prints_nothing(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, STAGES)
    assert main(["run", str(path), "--quiet", "--out", str(path.parent / "other")]) == 0
    out = capsys.readouterr()
    assert out.out == "" and out.err == ""
    assert (path.parent / "other" / "audit.parquet").exists()


def test_why_explains_removed_and_kept_rows(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, STAGES)
    main(["run", str(path), "--quiet"])
    capsys.readouterr()
    run = str(path.parent / "run")
    assert main(["why", "2", "--run", run]) == 0
    text = capsys.readouterr().out
    assert "stage 'mislabels'" in text and "knn-disagrees" in text
    assert "3 of its 3 nearest neighbours are labelled 'a'" in text
    assert main(["why", "9", "--run", run]) == 0
    assert "kept row standing for it: 1" in capsys.readouterr().out
    assert main(["why", "0", "--run", run]) == 0
    assert "was kept" in capsys.readouterr().out
    assert main(["why", "77", "--run", run]) == 2
    assert "not in the run" in capsys.readouterr().err


def test_check_selects_nothing(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, STAGES)
    assert main(["check", str(path)]) == 0
    assert "valid" in capsys.readouterr().out
    assert not (path.parent / "run").exists()


def test_methods_lists_every_key_with_parameters(capsys):
    assert main(["methods", "--json"]) == 0
    table = json.loads(capsys.readouterr().out)
    assert [m["key"] for m in table] == list(METHODS)
    enn = next(m for m in table if m["key"] == "enn")
    assert enn["reference"] == "Wilson 1972"
    assert {p["name"]: p["default"] for p in enn["params"]} == {"k": 3, "vote": "majority"}
    assert main(["methods"]) == 0
    assert "Wilson 1972" in capsys.readouterr().out


def test_demo_runs_end_to_end(tmp_path, capsys):
    """The demo pipeline at its default size; its truth file comes from the generator."""
    assert main(["demo", "--rows", "20000", "--out", str(tmp_path / "demo"), "--quiet"]) == 0
    text = capsys.readouterr().out
    assert "injected faults caught" in text and "recall" in text
    run = tmp_path / "demo" / "run"
    readings = pl.read_csv(tmp_path / "demo" / "data" / "readings.csv")
    kept = pl.read_parquet(run / "kept.parquet")
    removed = pl.read_parquet(run / "removed.parquet")
    assert sorted(kept["row_id"].to_list() + removed["row_id"].to_list()) == \
        sorted(readings["reading_id"].to_list())
    truth = pl.read_csv(tmp_path / "demo" / "data" / "truth.csv")
    audit = pl.read_parquet(run / "audit.parquet")
    resent = set(truth.filter(pl.col("fault") == "re-sent")["reading_id"].to_list())
    assert resent <= set(audit["row_id"].to_list())


def test_distances_reports_a_radius_profile(make_pipeline, two_blobs, capsys):
    """The candidate counts agree with a direct scipy cdist computation on the same space."""
    from scipy.spatial.distance import cdist

    from curate.pipeline.prepare import prepare
    from curate.spec import load_spec

    path = make_pipeline(two_blobs, STAGES)
    assert main(["distances", str(path), "--radius", "0.05", "--json"]) == 0
    profile = json.loads(capsys.readouterr().out)
    prep = prepare(load_spec(path))
    d = cdist(prep.space.matrix, prep.space.matrix)
    labels = prep.space_labels
    same = labels[:, None] == labels[None, :]
    np_fill = d + np.where(same, 0, np.inf)
    np.fill_diagonal(np_fill, np.inf)
    within = int((np_fill.min(axis=1) <= 0.05).sum())
    assert profile["candidates"][0]["rows_with_same_label_within"] == within


def test_a_required_parameter_is_asked_for(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, [{"method": "near-duplicates"}])
    assert main(["check", str(path)]) == 2
    assert "'radius' is required" in capsys.readouterr().err


def test_demo_at_small_size_stops_before_stripping_a_rare_class(tmp_path, capsys):
    """At 2,000 rows the rare classes are sparse and ENN would vote most of one out: the
    safety limit stops the run (exit 4) and no run folder is written."""
    assert main(["demo", "--rows", "2000", "--out", str(tmp_path / "demo"), "--quiet"]) == 4
    assert "max_removed_share" in capsys.readouterr().err
    assert not (tmp_path / "demo" / "run").exists()


def test_recall_target_on_the_command_line(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, STAGES)
    out = path.parent / "approx"
    assert main(["run", str(path), "--quiet", "--out", str(out), "--backend", "approximate",
                 "--recall-target", "0.9"]) == 0
    summary = json.loads((out / "summary.json").read_text())
    assert summary["engine"]["recall_target"] == 0.9 and summary["engine"]["recall"] >= 0.9
    assert main(["run", str(path), "--quiet", "--out", str(path.parent / "no"),
                 "--recall-target", "1.5"]) == 2
    assert "--recall-target" in capsys.readouterr().err
    assert not (path.parent / "no").exists()


def test_run_says_what_it_timed(make_pipeline, two_blobs, capsys):
    """The stages' time and the whole command's, both said (common practice, no source)."""
    path = make_pipeline(two_blobs, STAGES)
    assert main(["run", str(path)]) == 0
    err = capsys.readouterr().err
    assert "stages " in err and "; whole command " in err
    summary = json.loads((path.parent / "run" / "summary.json").read_text())
    assert summary["total_seconds"] >= summary["seconds"] > 0
