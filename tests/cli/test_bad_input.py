"""Every bad input fails with a clear message, the right exit code and no run folder.

Exit codes are our contract (README): 2 bad usage or pipeline file, 3 input failed
its schema or cannot be used, 4 a safety limit stopped the run. What a clean failure
looks like is common practice, no source (the convention of command-line tools): a
non-zero exit code, a message on stderr that names the problem and its fix, no
traceback, and no partial output left behind. Every case here also goes through
``message_checks.assert_plain_message``: the message starts with ``error:``, says the file
and line once, and prints no class name and no numpy repr.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import polars as pl
import pytest
from message_checks import assert_plain_message

from curate.cli import main


def run_cli(pipeline: Path, capsys: pytest.CaptureFixture[str]) -> tuple[int, str]:
    code = main(["run", str(pipeline), "--quiet"])
    return code, capsys.readouterr().err


def assert_clean_failure(pipeline: Path, code: int, err: str, expected: int, *words: str) -> None:
    # Common practice, no source: the code says which kind of failure (README's table), the
    # message names what and where and ends with a hint, there is no traceback, and neither
    # the run folder nor a partial one is left behind.
    assert code == expected, err
    assert_plain_message(err, where=str(pipeline))
    assert err.count(", line ") <= 1, err
    for word in words:
        assert word in err, err
    folder = pipeline.parent
    assert not (folder / "run").exists()
    assert not [p for p in folder.iterdir() if ".partial-" in p.name]


ENN = [{"method": "enn", "k": 3}]


def test_missing_input_file(make_pipeline, capsys):
    path = make_pipeline(None, ENN, {"path": "nowhere.csv"})
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, "nowhere.csv", "does not exist")


def test_missing_pipeline_file(tmp_path, capsys):
    code = main(["run", str(tmp_path / "none.toml")])
    assert code == 2
    err = capsys.readouterr().err
    assert_plain_message(err)
    assert "does not exist" in err


def test_unreadable_csv(make_pipeline, tmp_path, capsys):
    path = make_pipeline(None, ENN)
    (tmp_path / "table.csv").write_text('x,y\n1,"a\n2,b,3,4\n')
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "cannot read input")


def test_empty_table(make_pipeline, tmp_path, capsys):
    path = make_pipeline(None, ENN)
    (tmp_path / "table.csv").write_text("x,y\n")
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "no rows")


def test_missing_label_column(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, ENN, {"label": "condition"})
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "'condition'", "not in the input")


def test_one_class_only(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs.with_columns(pl.lit("a").alias("y")), ENN)
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "one class only")


def test_k_larger_than_table(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, [{"method": "enn", "k": 10}])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, "k = 10", "10 rows")


def test_k_larger_than_a_class(make_pipeline, two_blobs, capsys):
    frame = two_blobs.with_columns(pl.when(pl.col("x") > 5.15).then(pl.lit("c"))
                                   .otherwise(pl.col("y")).alias("y"))
    path = make_pipeline(frame, [{"method": "enn", "k": 2}])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, "class 'c' (2 rows)", "all-but-smallest")


@pytest.mark.parametrize("bad", [float("nan"), None])
def test_missing_values(make_pipeline, two_blobs, capsys, bad):
    frame = two_blobs.with_columns(pl.Series("x", [0.0, bad, *two_blobs["x"][2:]]))
    path = make_pipeline(frame, ENN)
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "'x'", "missing", "impute")


def test_infinite_values(make_pipeline, two_blobs, capsys):
    frame = two_blobs.with_columns(pl.Series("x", [np.inf, *two_blobs["x"][1:]]))
    path = make_pipeline(frame, ENN)
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "infinite", "'x'")


def test_constant_column_warns_once_and_runs(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs.with_columns(pl.lit(1.0).alias("flat")), ENN)
    assert main(["run", str(path)]) == 0
    err = capsys.readouterr().err
    assert err.count("warning: column 'flat' is constant") == 1, err
    assert (path.parent / "run" / "kept.parquet").exists()
    assert main(["run", str(path), "--quiet", "--out", str(path.parent / "quiet")]) == 0
    assert capsys.readouterr().err == "", "--quiet prints no warning"


def test_duplicate_ids(make_pipeline, two_blobs, capsys):
    frame = two_blobs.with_columns(pl.Series("rid", [1, 2, 3, 4, 5, 6, 7, 8, 9, 3]))
    path = make_pipeline(frame, ENN, {"id": "rid"})
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "repeated values", "3")


def test_unknown_pipeline_key(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, ENN, {"lable": "y"})
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, "'lable'", "line 4", "is not a known key")


def test_unknown_stage_parameter(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, [{"method": "enn", "neighbours": 3}])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, "'neighbours'", "stage 1", "k, vote")


def test_typo_in_method_key(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, [{"method": "ennn"}])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, "'ennn'", "enn", "exact-duplicates")


@pytest.mark.parametrize(("key", "value", "words"), [
    ("k", 0, ("'k'", "got 0", ">= 1")),
    ("k", "three", ("'k'", "integer")),
    ("vote", "most", ("'vote'", "'majority', 'unanimous'")),
    ("max_removed_share", 1.5, ("max_removed_share", "0.0 to 1.0")),
])
def test_impossible_stage_values(make_pipeline, two_blobs, capsys, key, value, words):
    path = make_pipeline(two_blobs, [{"method": "enn", key: value}])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, *words)


def test_schema_failure_stops_the_run(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, ENN, extra={"input.columns.x": {"type": "float", "max": 5.1}})
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "column 'x'", "less_than_or_equal_to",
                         "2 rows (first: 7, 8)", "quarantine")


def test_table_level_schema_failure_stops_even_with_quarantine(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, ENN, {"on_invalid": "quarantine"},
                         extra={"input.columns.pressure": {"type": "float"}})
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "pressure", "column_in_dataframe")


def test_safety_limit_stops_the_run(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, [{"method": "enn", "k": 3, "max_removed_share": 0.1}])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 4, "class 'b'", "max_removed_share = 0.1")


def test_existing_run_folder_is_not_overwritten(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, ENN)
    assert main(["run", str(path), "--quiet"]) == 0
    before = (path.parent / "run" / "summary.json").read_text()
    assert main(["run", str(path), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert_plain_message(err)
    assert "already exists" in err
    assert (path.parent / "run" / "summary.json").read_text() == before


# Messages (issue 10): values as the user wrote them, words in the right number, the key
# that was meant, letter case, and command-line options checked before any work.

def numeric_labels(frame: pl.DataFrame) -> pl.DataFrame:
    """Labels 1 and 9 written as numbers: polars reads them as integers, numpy holds them."""
    return frame.with_columns(pl.when(pl.col("y") == "a").then(1).otherwise(9).alias("y"))


def test_numeric_label_class_named_plainly(make_pipeline, two_blobs, capsys):
    frame = numeric_labels(two_blobs).with_columns(
        pl.when(pl.col("x") > 5.25).then(4).otherwise(pl.col("y")).alias("y"))
    path = make_pipeline(frame, [{"method": "enn", "k": 1}])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, "class '4' (1 row)")


def test_numeric_one_class_named_plainly(make_pipeline, two_blobs, capsys):
    path = make_pipeline(numeric_labels(two_blobs).with_columns(pl.lit(9).alias("y")), ENN)
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 3, "one class only (9)")


def test_numeric_safety_limit_names_the_class_plainly(make_pipeline, two_blobs, capsys):
    path = make_pipeline(numeric_labels(two_blobs), [{"method": "enn", "k": 3,
                                                       "max_removed_share": 0.1}])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 4, "class '9'")


def test_unknown_classes_listed_plainly(make_pipeline, two_blobs, capsys):
    path = make_pipeline(numeric_labels(two_blobs), [{"method": "enn", "classes": [1, 5]}])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, "classes '5' do not occur")


def test_misspelled_method_key_names_the_key_meant(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, [{"mehtod": "enn", "k": 3}])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, "'mehtod' is not a known key",
                         "did you mean 'method'?", "line 7")


@pytest.mark.parametrize(("stage", "space", "words"), [
    ({"method": "enn", "kk": 3}, {}, ("unknown parameter 'kk'", "did you mean 'k'?", "line 8")),
    ({"method": "enn", "vote": "majorty"}, {}, ("'majorty'", "did you mean 'majority'?")),
    ({"method": "enn"}, {"distance": "hvdn"}, ("'hvdn'", "did you mean 'hvdm'?", "line 7")),
    ({"method": "enn"}, {"mising": "far"}, ("'mising'", "did you mean 'missing'?")),
    ({"method": "enn", "k": 0}, {}, ("stage 1: parameter 'k' got 0", "line 8")),
])
def test_misspellings_suggest_the_known_word(make_pipeline, two_blobs, capsys, stage, space,
                                             words):
    extra = {"space": space} if space else None
    path = make_pipeline(two_blobs, [stage], extra=extra)
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, *words)


def test_fixed_values_in_another_letter_case_are_accepted(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, [{"method": "ENN", "vote": "Majority", "classes": "ALL"}],
                         {"on_invalid": "Stop"}, extra={"space": {"distance": "HEOM"},
                                                        "run": {"backend": "Brute"}})
    code, err = run_cli(path, capsys)
    assert code == 0, err
    summary = (path.parent / "run" / "summary.json").read_text()
    assert '"method": "enn"' in summary and '"distance": "heom"' in summary


@pytest.mark.parametrize(("option", "words"), [
    (["--backend", "bogus"], ("--backend bogus", "auto, brute")),
    (["--backend", "fst"], ("did you mean 'fast'?",)),
    (["--memory-mb", "0"], ("--memory-mb 0", "at least 16")),
])
def test_engine_options_checked_before_any_work(make_pipeline, capsys, option, words):
    # the input does not exist: the option is refused before the input is even looked for
    path = make_pipeline(None, ENN, {"path": "nowhere.csv"})
    code = main(["run", str(path), "--quiet", *option])
    err = capsys.readouterr().err
    assert_clean_failure(path, code, err, 2, *words)
    assert "nowhere.csv" not in err


def test_evaluate_k_larger_than_training_rows_refused(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, ENN)
    code = main(["evaluate", str(path), "--folds", "2", "--k", "1,500", "--quiet"])
    err = capsys.readouterr().err
    # 10 rows in 2 stratified folds: 5 training rows per fold
    assert_clean_failure(path, code, err, 2, "--k 500", "5 training rows")


def test_evaluate_missing_truth_names_the_option(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, ENN)
    code = main(["evaluate", str(path), "--folds", "2", "--truth", "nope.csv", "--quiet"])
    err = capsys.readouterr().err
    assert_clean_failure(path, code, err, 2, "--truth nope.csv", "does not exist")
    assert "[input]" not in err


@pytest.mark.parametrize(("extra", "words"), [
    ({"space": {"scale": "zscore", "distance": "heom"}}, ("line 6", "contradicts")),
    ({"cluster": {"address": "local:0"}}, ("line 7", "'local:0'")),
])
def test_checks_across_keys_say_file_and_line_once(make_pipeline, two_blobs, capsys, extra,
                                                   words):
    path = make_pipeline(two_blobs, ENN, extra=extra)
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, *words)
    assert err.count("[space]") + err.count("[cluster]") == 1, err
