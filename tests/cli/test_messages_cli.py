"""What the commands print for a newcomer (issue 10, "Messages"): paths that work where they
are used, hints that fit the run, readable numbers, warnings once, "(required)" not None.

Outside references: scipy's ``cdist`` for the nearest-neighbour distances that
`curate distances` rounds; Python's ``os.path`` for where a relative path points;
the README's promises for the rest (common practice, no source, for the wording).
"""

from __future__ import annotations

import json
import re
import warnings

import numpy as np
import polars as pl
import pytest
from message_checks import assert_plain_message
from scipy.spatial.distance import cdist

from curate import Sampler
from curate.cli import main
from curate.errors import ConstantColumnWarning

ENN = [{"method": "enn", "k": 3}]


def test_distances_prints_rounded_tables_and_takes_several_radii(make_pipeline, two_blobs,
                                                                  capsys):
    path = make_pipeline(two_blobs, [{"method": "exact-duplicates"}], {"ignore": ["colour"]})
    assert main(["distances", str(path), "--radius", "0.02", "0.05", "--radius", "0.5"]) == 0
    text = capsys.readouterr().out
    radii = [line.split()[0] for line in text.splitlines()[-3:]]
    assert radii == ["0.02", "0.05", "0.5"]
    assert not re.search(r"\d\.\d{5,}", text), "no long floats"
    # scipy: nearest same-label distance of each row in the range-scaled column x
    x = two_blobs["x"].to_numpy()
    scaled = ((x - x.min()) / (x.max() - x.min())).reshape(-1, 1)
    labels = two_blobs["y"].to_numpy()
    dist = cdist(scaled, scaled)
    np.fill_diagonal(dist, np.inf)
    friend = [dist[i, labels == labels[i]].min() for i in range(len(x))]
    median = f"{np.quantile(friend, 0.5):.3g}"
    same = next(line for line in text.splitlines() if "with the same label" in line)
    assert median in same.split()


def test_methods_shows_required_and_none_not_python_none(capsys):
    assert main(["methods"]) == 0
    text = capsys.readouterr().out
    assert "None" not in text
    assert re.search(r"radius = \(required\)", text)  # near-duplicates cannot run without it
    assert re.search(r"threshold = \(none\)", text)   # hardness scores without removing


def test_check_shows_failing_checks_per_column(make_pipeline, two_blobs, capsys):
    frame = two_blobs.with_columns(pl.Series("x", [None, *two_blobs["x"][1:]]))
    path = make_pipeline(frame, ENN, {"on_invalid": "quarantine"},
                         extra={"input.columns.x": {"type": "float", "max": 5.25}})
    assert main(["check", str(path)]) == 0
    text = capsys.readouterr().out
    assert "2 would be quarantined" in text and "1 stage" in text
    assert "column 'x' failed not_nullable: 1 row (0)" in text
    assert "nullable = false" in text  # the default said where it bites
    assert "column 'x' failed less_than_or_equal_to(5.25): 1 row (8)" in text


def test_why_hint_fits_a_run_with_an_id_column(make_pipeline, two_blobs, capsys):
    frame = two_blobs.with_columns(pl.Series("rid", [100 + i for i in range(10)]))
    path = make_pipeline(frame, ENN, {"id": "rid"})
    assert main(["run", str(path), "--quiet"]) == 0
    assert main(["why", "0", "--run", str(path.parent / "run")]) == 2
    err = capsys.readouterr().err
    assert_plain_message(err)
    assert "id column 'rid'" in err and "0-based" not in err and "position)" not in err


def test_review_names_a_protect_file_that_works_from_the_pipeline_folder(
        make_pipeline, two_blobs, tmp_path, monkeypatch, capsys):
    # the pipeline lives in tmp/project; the reviewer works in tmp/desk with a relative --out
    project, desk = tmp_path / "project", tmp_path / "desk"
    project.mkdir()
    (desk / "notes").mkdir(parents=True)
    path = make_pipeline(two_blobs, ENN)
    moved = project / "pipeline.toml"
    two_blobs.write_csv(project / "table.csv")
    moved.write_text(path.read_text())
    monkeypatch.chdir(desk)
    assert main(["run", str(moved), "--quiet"]) == 0
    assert main(["review", "--run", str(project / "run"), "--out", "notes/review.csv"]) == 0
    err = capsys.readouterr().err
    named = re.search(r'protect_file = "([^"]+)"', err)
    assert named is not None, err
    # os.path: the named path, read from the pipeline file's folder, is the file written
    assert (project / named.group(1)).resolve() == (desk / "notes" / "review.csv").resolve()
    review = pl.read_csv(desk / "notes" / "review.csv")
    review.with_columns(pl.lit("keep").alias("decision")).write_csv(desk / "notes" / "review.csv")
    moved.write_text(moved.read_text().replace('label = "y"',
                                               f'label = "y"\nprotect_file = "{named.group(1)}"'))
    assert main(["run", str(moved), "--quiet", "--out", str(project / "again")]) == 0
    kept = pl.read_parquet(project / "again" / "kept.parquet")
    assert set(review["row_id"].to_list()) <= set(kept["row_id"].to_list())


def test_evaluate_warns_once_over_folds_and_not_with_quiet(make_pipeline, wine, capsys):
    X, y = wine
    frame = pl.DataFrame(X[:, :4], schema=["a", "b", "c", "d"], orient="row").with_columns(
        pl.lit(1.0).alias("flat"), pl.Series("y", y.astype(str)))
    path = make_pipeline(frame, ENN)
    assert main(["evaluate", str(path), "--folds", "3", "--k", "1"]) == 0
    err = capsys.readouterr().err
    assert err.count("'flat' is constant") == 1, err
    assert main(["evaluate", str(path), "--folds", "3", "--k", "1", "--quiet", "--json"]) == 0
    out = capsys.readouterr()
    assert out.err == "" and json.loads(out.out)["folds"] == 3


@pytest.mark.parametrize("quiet", [False, True])
def test_sampler_warns_once_per_fit_and_quiet_silences(wine, quiet):
    X, y = wine
    X = np.column_stack([X, np.ones(len(X))])
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        Sampler(method="enn", k=3, quiet=quiet).fit_resample(X, y)
    constant = [w for w in caught if issubclass(w.category, ConstantColumnWarning)]
    assert len(constant) == (0 if quiet else 1)


def test_missing_required_parameter_points_at_the_stage(make_pipeline, two_blobs, capsys):
    path = make_pipeline(two_blobs, [{"method": "near-duplicates"}])
    assert main(["run", str(path), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert_plain_message(err, where=str(path))
    assert "stage 1: parameter 'radius' is required" in err


def test_audit_details_say_one_neighbour_in_the_singular(two_blobs):
    # kDN (Smith, Martinez and Giraud-Carrier 2014) with k = 1: row 2 (x = 0.2, label b) has
    # label-a rows on both sides at 0.1, so its one nearest neighbour disagrees (kDN = 1).
    sampler = Sampler(method="hardness", k=1, threshold=1.0)
    sampler.fit_resample(two_blobs.select("x"), two_blobs["y"])
    detail = dict(zip(sampler.audit_["row_id"], sampler.audit_["detail"], strict=True))
    assert detail[2].startswith("1 of its 1 nearest neighbour has another label")
