"""Bad settings of a label-noise stage stop `curate run` and `curate check` cleanly.

What a clean failure looks like is common practice, no source (the convention of
command-line tools, as in test_bad_input.py): exit code 2 for a bad pipeline file
or an impossible request (README), a message naming the stage's key and the fix,
no traceback, and no run folder. Cross-validation needs at least two folds and, per
class, at least as many rows as folds (scikit-learn's StratifiedKFold warns below).
"""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest
from test_bad_input import assert_clean_failure, run_cli

from curate.cli import main


@pytest.fixture
def table() -> pl.DataFrame:
    """Hand-made: 12 rows of class a, 3 of class b, on one numeric column."""
    return pl.DataFrame({"x": np.linspace(0.0, 1.0, 15), "y": ["a"] * 12 + ["b"] * 3})


@pytest.mark.parametrize(("stage", "words"), [
    ({"models": ["sklearn.ensemble.NoSuchForest"]}, ("models", "does not import")),
    ({"models": ["knn", "sklearn.svm.LinearSVC"]}, ("models", "has no predict_proba")),
    ({"folds": 1}, ("folds", ">= 2")),
    ({"folds": 4}, ("folds = 4", "'b' has only 3 rows", "lower folds to 3")),
])
@pytest.mark.parametrize("method", ["committee", "ipf", "class-thresholds"])
def test_bad_noise_settings_exit_2_and_write_nothing(make_pipeline, table, capsys, method,
                                                     stage, words):
    path = make_pipeline(table, [{"method": method} | stage])
    code, err = run_cli(path, capsys)
    assert_clean_failure(path, code, err, 2, *words)


def test_check_finds_a_class_smaller_than_folds(make_pipeline, table, capsys):
    path = make_pipeline(table, [{"method": "committee", "folds": 5}])
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert "folds = 5" in err and "hint: lower folds to 3" in err
    assert not (path.parent / "run").exists()
