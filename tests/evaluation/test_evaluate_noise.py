"""The noise check: removals scored against injected flips and against a demo's known faults.

Outside references: imbalanced-learn's EditedNearestNeighbours (n_neighbors=3,
kind_sel="mode"; the same rule as curate's ENN with a majority vote when two
classes and odd k rule out tied votes) run on the same training folds with the
same flipped labels, scaled by scikit-learn's MinMaxScaler fitted on each
training part; polars' duplicate detection (``is_first_distinct``) for the
re-sent rows of the invented demo, whose ground truth is the generator's own
specification (every re-sent row copies an earlier row's values and label).
Data: scikit-learn's bundled breast cancer set (Street et al., UCI).
"""

from __future__ import annotations

import numpy as np
import polars as pl
from evaluate_fixtures import spec_for
from imblearn.under_sampling import EditedNearestNeighbours
from sklearn.model_selection import StratifiedKFold
from sklearn.preprocessing import MinMaxScaler

from curate.demo import data as demo_data
from curate.evaluation.crossval import evaluate
from curate.evaluation.stats import flip_labels

FOLDS, SEED, RATE = 4, 2, 0.1


def test_injected_flips_are_scored_like_imbalanced_learn_finds_them(tmp_path,
                                                                   breast_cancer) -> None:
    x, y = breast_cancer
    frame = pl.DataFrame(x, schema=[f"f{j}" for j in range(x.shape[1])], orient="row")
    frame.with_columns(pl.Series("target", y)).write_csv(tmp_path / "bc.csv")
    spec = spec_for(tmp_path / "bc.csv", "target",
                    [{"name": "mislabels", "method": "enn", "k": 3, "max_removed_share": 1.0}])
    out = evaluate(spec, folds=FOLDS, ks=[1], inject_noise=RATE, seed=SEED)

    removed = found = flipped_total = 0
    cv = StratifiedKFold(n_splits=FOLDS, shuffle=True, random_state=SEED)
    for number, (train, _) in enumerate(cv.split(x, y)):
        noisy, flipped = flip_labels(y[train], RATE, [SEED, 0, number])
        sampler = EditedNearestNeighbours(sampling_strategy="all", n_neighbors=3, kind_sel="mode")
        sampler.fit_resample(MinMaxScaler().fit_transform(x[train]), noisy)
        gone = np.setdiff1d(np.arange(len(train)), sampler.sample_indices_)
        removed += len(gone)
        found += int(flipped[gone].sum())
        flipped_total += int(flipped.sum())
    stage = out["noise"]["stages"][0]
    assert (stage["removed"], stage["found"]) == (removed, found)
    assert out["noise"]["flipped"] == flipped_total
    assert stage["recall"] == found / flipped_total
    # ENN is meant to catch wrong labels and is the only stage: every flip reached it.
    assert stage["faulty"] == flipped_total and stage["meant_for"] == ["label-flip"]
    rates = ("removed", "faulty", "found", "precision", "recall")
    assert out["noise"]["all_stages"] == {k: stage[k] for k in rates}


def test_known_faults_of_the_demo_are_scored_per_kind(tmp_path) -> None:
    paths = demo_data.write(tmp_path, rows=800, seed=4)
    spec = spec_for(paths["readings"], "condition",
                    [{"name": "copies", "method": "exact-duplicates"},
                     {"name": "mislabels", "method": "enn", "k": 3, "max_removed_share": 1.0}],
                    input={"id": "reading_id", "ignore": ["note"]})
    out = evaluate(spec, folds=FOLDS, ks=[1], truth=paths["truth"], seed=SEED)

    readings = pl.read_csv(paths["readings"])
    truth = pl.read_csv(paths["truth"])
    fault = readings.join(truth.select("reading_id", "fault"), on="reading_id", how="left",
                          maintain_order="left")["fault"].fill_null("").to_numpy()
    columns = [*demo_data.FEATURES, "condition"]
    copies = resent = resent_total = flips_left = total_faulty = 0
    cv = StratifiedKFold(n_splits=FOLDS, shuffle=True, random_state=SEED)
    for train, _ in cv.split(np.zeros(readings.height), readings["condition"].to_numpy()):
        part = readings[train].select(columns)
        repeated = ~part.select(pl.struct(pl.all()).is_first_distinct()).to_series().to_numpy()
        copies += int(repeated.sum())
        resent += int((repeated & (fault[train] == "re-sent")).sum())
        resent_total += int((fault[train] == "re-sent").sum())
        flips_left += int((~repeated & (fault[train] == "label-flip")).sum())
        total_faulty += int((fault[train] != "").sum())
    copies_stage, enn_stage = out["truth"]["stages"]
    assert copies_stage["removed"] == copies
    assert out["truth"]["all_stages"]["faulty"] == total_faulty
    assert out["truth"]["by_fault"]["re-sent"]["found"] >= resent > 0  # ENN may remove some too
    assert set(out["truth"]["faults"]) == set(truth["fault"].unique())
    # Each stage is scored against the faults it is meant to catch that reached it: the copy
    # stage against re-sent rows only (not every fault), ENN against the flips the copy stage
    # left, and the denominator is said in words.
    assert (copies_stage["faulty"], copies_stage["found"]) == (resent_total, resent)
    assert copies_stage["recall"] == resent / resent_total
    assert "re-sent" in copies_stage["denominator"]
    assert enn_stage["faulty"] == flips_left > 0
    assert enn_stage["recall"] == enn_stage["found"] / flips_left
