"""`curate evaluate` with several pipelines or `--vary`: one ranked list on the same folds.

Outside references: scikit-learn's ``cross_val_score`` (StratifiedKFold,
MinMaxScaler, KNeighborsClassifier) for the uncurated accuracy every variant
shares; scipy's Student t distribution with the variance correction of Nadeau
and Bengio (2003) for the paired test between variants; scikit-learn's bundled
wine set (open data shipped in a package) as data. The JSON keys of a single
evaluation stay (the issue), with ``variant`` naming each record's variant.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from evaluate_fixtures import wine_csv
from scipy import stats
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import MinMaxScaler

from curate.cli import main
from curate.evaluation.variants import NONE, recommendation

SINGLE_KEYS = {"folds", "repeats", "seed", "rows", "ks", "model", "baseline_accuracy",
               "kept_share", "lookup", "best_k", "results", "noise", "truth", "over_limit"}


@pytest.fixture(scope="module")
def files(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    folder = tmp_path_factory.mktemp("variants")
    wine_csv(folder)
    head = '[input]\npath = "wine.csv"\nlabel = "target"\n\n[[stages]]\nname = "mislabels"\n'
    (folder / "enn.toml").write_text(head + 'method = "enn"\nk = 3\n')
    (folder / "committee.toml").write_text(head + 'method = "committee"\n'
                                           'models = ["knn", "linear"]\nfolds = 3\n')
    return folder / "enn.toml", folder / "committee.toml"


@pytest.fixture(scope="module")
def compared(files: tuple[Path, Path]) -> dict:
    out = files[0].parent / "compared"
    assert main(["evaluate", *map(str, files), "--folds", "4", "--k", "1", "--seed", "1",
                 "--quiet", "--json", "--out", str(out)]) == 0
    return json.loads((out / "evaluation.json").read_text())


def test_keys_of_a_single_evaluation_stay_and_every_record_names_its_variant(compared):
    assert set(compared) >= SINGLE_KEYS
    assert {r["variant"] for r in compared["results"]} == {NONE, "enn", "committee"}
    plain = [r for r in compared["results"] if not r["curated"]]
    assert [r["variant"] for r in plain] == [NONE], "one uncurated record: the folds are shared"
    assert {r["variant"] for r in compared["ranking"]} == {NONE, "enn", "committee"}
    assert compared["recommendation"].startswith("on this table")


def test_no_curation_is_scikit_learns_cross_validated_knn(compared, files):
    x, y = (np.loadtxt(files[0].parent / "wine.csv", delimiter=",", skiprows=1)[:, s]
            for s in (slice(0, -1), -1))
    expected = cross_val_score(make_pipeline(MinMaxScaler(), KNeighborsClassifier(1)), x, y,
                               cv=StratifiedKFold(4, shuffle=True, random_state=1)).mean()
    none = next(r for r in compared["ranking"] if r["variant"] == NONE)
    assert none["accuracy"] == pytest.approx(expected, abs=1e-12)


def test_paired_tests_follow_nadeau_and_bengio(compared):
    """p = 2 * t.sf(|mean d| / sqrt((1/J + n_test/n_train) var(d)), J - 1) on fold accuracies."""
    folds = {r["variant"]: np.array(r["fold_accuracy"]) for r in compared["results"]
             if r["k"] == 1}
    ranking = compared["ranking"]
    best = next(r["variant"] for r in ranking if r["variant"] != NONE)
    for row in ranking:
        for other, tag in ((NONE, "none"), (best, "best")):
            d = folds[row["variant"]] - folds[other]
            assert row[f"difference_to_{tag}"] == pytest.approx(d.mean(), abs=1e-12)
            if row["variant"] == other:
                assert row[f"p_value_to_{tag}"] == 1.0
                continue
            if d.var() == 0:  # every fold the same: no spread to test against
                assert row[f"p_value_to_{tag}"] == (1.0 if d.mean() == 0 else 0.0)
                continue
            t = d.mean() / np.sqrt((1 / len(d) + 1 / 3) * d.var(ddof=1))
            assert row[f"p_value_to_{tag}"] == pytest.approx(2 * stats.t.sf(abs(t), len(d) - 1))
    assert [r["accuracy"] for r in ranking] == sorted((r["accuracy"] for r in ranking),
                                                      reverse=True)


def test_vary_equals_separate_files(files, compared, capsys):
    assert main(["evaluate", str(files[0]), "--vary", "mislabels.k=3,5", "--folds", "4",
                 "--k", "1", "--seed", "1", "--quiet", "--json"]) == 0
    varied = json.loads(capsys.readouterr().out)
    by_name = {r["variant"]: r for r in varied["results"] if r["curated"]}
    enn = next(r for r in compared["results"] if r["variant"] == "enn")
    assert by_name["mislabels.k=3"]["fold_accuracy"] == enn["fold_accuracy"]
    assert set(by_name) == {"mislabels.k=3", "mislabels.k=5"}


def test_terminal_shows_a_ranked_list_ending_with_the_sentence(files, capsys):
    assert main(["evaluate", str(files[0]), "--vary", "mislabels.method=enn,all-knn",
                 "--folds", "3", "--k", "1", "--quiet"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert "ranked by 1-NN accuracy" in lines[0]
    assert lines[-1].startswith("on this table")
    assert sum(NONE in line or "mislabels.method=" in line for line in lines) == 4


@pytest.mark.parametrize("argv", [["--vary", "nostage.k=3"], ["--vary", "mislabels.k"],
                                  ["--vary", "mislabels.method=nomethod"],
                                  ["--vary", "mislabels.k=0"]])
def test_bad_vary_exits_with_usage_code(files, argv, capsys):
    assert main(["evaluate", str(files[0]), "--quiet", "--folds", "3", *argv]) == 2
    assert "hint:" in capsys.readouterr().err


def _row(variant: str, diff: float, p: float) -> dict:
    return {"variant": variant, "difference_to_none": diff, "p_value_to_none": p,
            "model": "knn", "k": 1}


def test_the_sentence_says_when_cleaning_lowers_accuracy():
    """Common practice, no source: a gain is claimed only at p < 0.05; losses are named."""
    rows = [_row(NONE, 0.0, 1.0), _row("committee", -0.004, 0.8), _row("enn", -0.043, 0.01)]
    text = recommendation(rows)
    assert text.startswith("on this table, cleaning lowers 1-NN accuracy")
    assert "keep every row" in text and "`enn` loses 4.3 (p = 0.01)" in text
    unclear = recommendation([_row("enn", 0.01, 0.3), _row(NONE, 0.0, 1.0)])
    assert "no cleaning tried clearly helps" in unclear
