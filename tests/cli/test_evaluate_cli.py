"""`curate evaluate` on the command line: JSON contract, run folder, report, usage errors.

Outside references: json (the output parses and has the issue's keys),
Python's html.parser and the PNG signature (report_fixtures) for the report,
scikit-learn's bundled wine set (Forina et al., UCI) as data, and
scikit-learn's ``cross_val_score`` (StratifiedKFold, MinMaxScaler,
KNeighborsClassifier) for the numbers printed.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from evaluate_fixtures import wine_csv
from message_checks import assert_plain_message
from report_fixtures import Page, check_images, keyed_numbers_match
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import MinMaxScaler

from curate.api import run
from curate.cli import main
from curate.spec import load_spec

RECORD_KEYS = {"k", "curated", "model", "accuracy", "balanced_accuracy", "macro_f1", "kept_share"}


@pytest.fixture(scope="module")
def pipeline(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("cli")
    wine_csv(folder)
    path = folder / "wine.toml"
    path.write_text('[input]\npath = "wine.csv"\nlabel = "target"\n\n[[stages]]\n'
                    'name = "mislabels"\nmethod = "enn"\nk = 3\n')
    return path


@pytest.fixture(scope="module")
def evaluated(pipeline: Path) -> tuple[dict, Path]:
    out = pipeline.parent / "evaluation"
    assert main(["evaluate", str(pipeline), "--folds", "4", "--k", "1,5", "--seed", "2",
                 "--inject-noise", "0.1", "--out", str(out), "--quiet", "--json"]) == 0
    return json.loads((out / "evaluation.json").read_text()), out


def test_json_on_stdout_has_the_promised_keys(pipeline: Path, capsys) -> None:
    assert main(["evaluate", str(pipeline), "--folds", "3", "--k", "3", "--quiet", "--json"]) == 0
    result = json.loads(capsys.readouterr().out)
    assert (result["folds"], result["repeats"]) == (3, 1)
    assert 0 < result["baseline_accuracy"] < 1
    assert len(result["results"]) == 2
    for record in result["results"]:
        assert set(record) >= RECORD_KEYS
        assert ("p_value" in record) == record["curated"]
    # The uncurated record is scikit-learn's cross-validated kNN on the same folds.
    x, y = (np.loadtxt(pipeline.parent / "wine.csv", delimiter=",", skiprows=1)[:, s]
            for s in (slice(0, -1), -1))
    expected = cross_val_score(make_pipeline(MinMaxScaler(), KNeighborsClassifier(3)), x, y,
                               cv=StratifiedKFold(3, shuffle=True, random_state=0)).mean()
    assert result["results"][0]["accuracy"] == pytest.approx(expected, abs=1e-12)


def test_out_folder_holds_evaluation_and_a_report_that_agrees(evaluated: tuple[dict, Path],
                                                             pipeline: Path) -> None:
    result, out = evaluated
    assert sorted(p.name for p in out.iterdir()) == ["evaluation.json", "report.html",
                                                    "written-by-curate.json"]
    page = Page.read(out / "report.html")
    assert {"headline", "flow", "classes", "projection", "distances", "evaluation",
            "cautions"} <= set(page.sections)
    assert len(page.images) >= 5  # the run's four and accuracy against k
    check_images(page)
    keys = set(page.keyed)
    assert {f"evaluation.results.{i}.accuracy" for i in range(4)} <= keys
    assert {"evaluation.baseline_accuracy", "evaluation.noise.all_stages.recall"} <= keys
    # The run's numbers come from a run on all rows (same input, pipeline and seed, so the
    # same counts as `curate run` gives; timings differ), the evaluation's from evaluation.json.
    summary = run(load_spec(pipeline)).summary
    assert {"rows_in", "rows_kept", "rows_removed"} <= keys
    keyed_numbers_match(page, {"evaluation.": result, "": summary}, skip="seconds")


def test_terminal_table_without_json(pipeline: Path, capsys) -> None:
    assert main(["evaluate", str(pipeline), "--folds", "3", "--k", "1", "--quiet",
                 "--model", "sklearn.tree.DecisionTreeClassifier",
                 "--model-param", "max_depth=2"]) == 0
    text = capsys.readouterr().out
    assert "stratified 3-fold" in text and "DecisionTreeClassifier" in text


@pytest.mark.parametrize("argv", [["--k", "0"], ["--folds", "500"], ["--inject-noise", "1.5"],
                                  ["--model", "no.such.Model"], ["--noise-towards", "7"],
                                  ["--model", "sklearn.tree.DecisionTreeClassifier",
                                   "--model-param", "depth_of_tree=2"]])
def test_bad_requests_exit_with_usage_code(pipeline: Path, argv: list[str], capsys) -> None:
    assert main(["evaluate", str(pipeline), "--quiet", *argv]) == 2
    err = capsys.readouterr().err
    assert_plain_message(err)


@pytest.mark.parametrize("argv, named", [
    (["--model", "sklearn.svm.SVC", "--model-param", "C=abc"], ["sklearn.svm.SVC", "C='abc'"]),
    # scikit-learn's MultinomialNB refuses negative features, which z-scores have: the error
    # comes from the model's fit on the first fold.
    (["--model", "sklearn.naive_bayes.MultinomialNB"], ["MultinomialNB", "Negative values"]),
])
def test_errors_of_a_user_named_model_are_usage_errors(pipeline: Path, argv: list[str],
                                                      named: list[str], capsys) -> None:
    path = pipeline.parent / "wine-zscore.toml"
    path.write_text(pipeline.read_text() + '\n[space]\nscale = "zscore"\n')
    assert main(["evaluate", str(path), "--folds", "3", "--k", "1", "--quiet", *argv]) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err and "hint:" in err
    for word in named:
        assert word in err, err


def test_a_class_smaller_than_the_folds_is_a_warning_in_the_text(pipeline: Path, capsys) -> None:
    table = pipeline.parent / "wine.csv"
    rows = table.read_text().splitlines()
    small = [r for r in rows[1:] if r.endswith(",2")][:5]
    (pipeline.parent / "wine4.csv").write_text(
        "\n".join([rows[0], *[r for r in rows[1:] if not r.endswith(",2")], *small]) + "\n")
    path = pipeline.parent / "wine4.toml"
    path.write_text(pipeline.read_text().replace("wine.csv", "wine4.csv"))
    assert main(["evaluate", str(path), "--folds", "8", "--k", "1", "--quiet"]) == 0
    assert "warning: class '2' has 5 rows, fewer than the 8 folds" in capsys.readouterr().out
