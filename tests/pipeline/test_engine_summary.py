"""summary.json says which neighbour backend ran and, for the approximate one, its recall.

Reference: scikit-learn's NearestNeighbors (exact brute force) on the same space; recall is the
share of each row's exact k nearest that the approximate backend returned.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import open_data
import polars as pl
from sklearn.neighbors import NearestNeighbors

from curate.api import run
from curate.neighbours import kneighbors
from curate.pipeline.prepare import prepare
from curate.spec import spec_from_dict


def wine_spec(tmp_path, backend: str):
    X, y = open_data.load("wine")
    pl.DataFrame(X, schema=[f"f{i}" for i in range(X.shape[1])]).with_columns(
        pl.Series("y", y)).write_csv(tmp_path / "wine.csv")
    return spec_from_dict({"input": {"path": "wine.csv", "label": "y"},
                           "stages": [{"method": "enn", "k": 5}],
                           "run": {"backend": backend}}, base=tmp_path)


def test_exact_backend_is_named_with_its_reason(tmp_path):
    summary = run(wine_spec(tmp_path, "auto")).summary["engine"]
    assert summary["requested"] == "auto" and summary["exact"] is True
    assert summary["backend"] in ("brute", "sklearn", "fast", "faiss") and summary["reason"]


def test_reported_recall_equals_recall_against_scikit_learn(tmp_path):
    spec = wine_spec(tmp_path, "approximate")
    reported = run(spec).summary["engine"]
    assert reported["backend"] == "approximate" and reported["exact"] is False
    space = prepare(spec).space
    _, approx = kneighbors(replace(space, engine=replace(space.engine, backend="approximate")), 5)
    exact = NearestNeighbors(n_neighbors=6, algorithm="brute").fit(space.matrix)
    _, truth = exact.kneighbors(space.matrix)
    truth = truth[:, 1:]  # drop the row itself (no exact copies in wine)
    recall = np.mean([len(set(a) & set(t)) / 5 for a, t in zip(approx, truth, strict=True)])
    assert reported["recall_sample"] == space.n
    assert abs(reported["recall"] - recall) < 1e-12


def test_each_stage_records_the_engine_it_used_and_the_run_takes_the_lowest_recall(tmp_path):
    spec = wine_spec(tmp_path, "approximate")
    spec = replace(spec, stages=(*spec.stages, replace(spec.stages[0], name="again", params={
        **spec.stages[0].params, "k": 3})))
    result = run(spec)
    summary = result.summary
    recalls = [st["info"]["engine"]["recall"] for st in summary["stages"]]
    assert all(st["info"]["engine"]["backends"] == ["approximate"] for st in summary["stages"])
    assert summary["engine"]["recall"] == min(recalls)
    assert summary["engine"]["recall_target"] == 0.99
    assert all(r >= 0.99 for r in recalls)  # wine is small: the sample is every row
    from curate.report.html import render_run

    page = render_run(result)
    assert page.count("neighbours from the approximate engine") == 2
    assert f"recall {summary['engine']['recall']:.3f} measured on" in page


def test_exact_stages_record_their_backend(tmp_path):
    summary = run(wine_spec(tmp_path, "fast")).summary
    engine = summary["stages"][0]["info"]["engine"]
    assert engine["backends"] == ["fast"] and engine["exact"] is True
    assert summary["engine"]["backend"] == "fast" and summary["engine"]["recall"] == 1.0
