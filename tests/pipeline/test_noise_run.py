"""Label-noise stages in a whole run: the doubt column, suggested labels, flagged rows, review.

Outside references: scikit-learn's ``cross_val_predict(..., method="predict_proba")``
with the same ``StratifiedKFold`` folds on the range-normalised features
(``MinMaxScaler``, curate's default scaling) gives the doubt that kept.parquet
and removed.parquet must hold. Data: scikit-learn's bundled wine table (open
data shipped in a package) with 10% of labels flipped (seeded). That the
input's label column is never overwritten and that a reviewer sees the most
doubtful rows first is what the issue asks, checked against the input itself.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import polars as pl
import pytest
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold, cross_val_predict
from sklearn.preprocessing import MinMaxScaler

from curate import Sampler
from curate.api import run
from curate.io.explain import explain
from curate.io.review import review_table

LINEAR = ["linear"]


@pytest.fixture
def noisy_wine(wine) -> pl.DataFrame:
    X, y = wine
    rng = np.random.default_rng(0)
    chosen = rng.choice(len(y), 18, replace=False)
    y[chosen] = (y[chosen] + rng.integers(1, 3, 18)) % 3
    names = np.array(["barolo", "grignolino", "barbera"])[y]
    return pl.DataFrame(X[:, :8], schema=[f"f{j}" for j in range(8)]).with_columns(
        pl.Series("y", names))


def run_stage(folder: Path, frame: pl.DataFrame, stage: dict, scores: bool = True,
              out: str = "run"):
    frame.write_parquet(folder / "t.parquet")
    return run({"input": {"path": "t.parquet", "label": "y"}, "stages": [stage],
                "output": {"scores": scores}}, base=folder, out=folder / out)


def test_doubt_column_is_scikit_learns_out_of_fold_probability(tmp_path, noisy_wine):
    result = run_stage(tmp_path, noisy_wine, {"method": "committee", "models": LINEAR,
                                              "seed": 3})
    X = MinMaxScaler().fit_transform(noisy_wine.drop("y").to_numpy())
    names, y = np.unique(noisy_wine["y"].to_numpy(), return_inverse=True)
    proba = cross_val_predict(LogisticRegression(C=100.0, max_iter=1000, random_state=3), X, y,
                              cv=StratifiedKFold(5, shuffle=True, random_state=3),
                              method="predict_proba")
    expected = 1 - proba[np.arange(len(y)), y]
    both = pl.concat([pl.read_parquet(tmp_path / "run" / "kept.parquet"),
                      pl.read_parquet(tmp_path / "run" / "removed.parquet")]).sort("row_id")
    np.testing.assert_allclose(both["doubt"].to_numpy(), expected, atol=1e-9)
    assert result.removed.height > 0


def test_no_doubt_column_when_scores_are_off(tmp_path, noisy_wine):
    result = run_stage(tmp_path, noisy_wine, {"method": "committee", "models": LINEAR},
                       scores=False)
    assert "doubt" not in result.kept.columns and "doubt" not in result.removed.columns


@pytest.mark.parametrize("action", ["relabel", "report"])
def test_flagged_rows_stay_and_the_label_column_is_never_changed(tmp_path, noisy_wine, action):
    removing = run_stage(tmp_path, noisy_wine, {"method": "committee", "models": LINEAR})
    flagged_ids = removing.audit["row_id"].to_list()
    result = run({"input": {"path": "t.parquet", "label": "y"},
                  "stages": [{"method": "committee", "models": LINEAR, "action": action}]},
                 base=tmp_path, out=tmp_path / "run2")
    kept = pl.read_parquet(tmp_path / "run2" / "kept.parquet").sort("row_id")
    assert kept.height == noisy_wine.height and result.removed.height == 0
    assert kept["y"].to_list() == noisy_wine["y"].to_list(), "the input's labels, untouched"
    flagged = pl.read_parquet(tmp_path / "run2" / "flagged.parquet")
    assert sorted(flagged["row_id"].to_list()) == sorted(flagged_ids)
    assert set(flagged["action"].to_list()) == {action}
    assert (flagged["suggested_label"] != flagged["label"]).all()
    if action == "relabel":
        suggested = kept.filter(pl.col("suggested_label").is_not_null())
        assert sorted(suggested["row_id"].to_list()) == sorted(flagged_ids)
    else:
        assert "suggested_label" not in kept.columns
    assert "suggested_label" not in removing.kept.columns, "remove writes no suggestions"
    one = flagged.row(0, named=True)
    assert repr(one["suggested_label"]) in explain(tmp_path / "run2", str(one["row_id"]))


def test_removed_rows_carry_their_suggested_label_in_the_audit(tmp_path, noisy_wine):
    result = run_stage(tmp_path, noisy_wine, {"method": "class-thresholds", "models": LINEAR})
    audit = result.audit
    assert audit.height > 0 and audit["suggested_label"].is_not_null().all()
    assert (audit["suggested_label"] != audit["label"]).all()
    enn = run_stage(tmp_path, noisy_wine, {"method": "enn"}, out="run-enn")
    assert enn.audit["suggested_label"].is_null().all(), "other methods suggest nothing"


def test_review_lists_the_most_doubtful_rows_first(tmp_path, noisy_wine):
    noisy_wine.write_parquet(tmp_path / "t.parquet")
    run({"input": {"path": "t.parquet", "label": "y"},
         "stages": [{"method": "committee", "models": LINEAR, "action": "report"},
                    {"method": "enn", "k": 3}]}, base=tmp_path, out=tmp_path / "run")
    review = review_table(tmp_path / "run")
    doubt = review["doubt"].to_numpy()
    assert np.all(np.diff(doubt) <= 0), "sorted by doubt, most doubtful first"
    assert {"remove", "report"} == set(review["action"].to_list())


def test_relabelling_half_a_class_meets_the_safety_limit(tmp_path, noisy_wine):
    from curate.errors import SafetyLimitError

    with pytest.raises(SafetyLimitError, match="would relabel"):
        run_stage(tmp_path, noisy_wine, {"method": "committee", "models": LINEAR,
                                         "action": "relabel", "vote": "majority",
                                         "min_doubt": 0.0, "max_removed_share": 0.05})


def test_sampler_scores_doubt(noisy_wine):
    X = noisy_wine.drop("y").to_numpy()
    sampler = Sampler(method="committee", models=LINEAR)
    kept, _ = sampler.fit_resample(X, noisy_wine["y"].to_numpy())
    assert sampler.scores_["doubt"].shape == (len(X),)
    assert len(kept) == len(X) - sampler.audit_.height
    assert sampler.audit_["suggested_label"].is_not_null().all()
    relabel = Sampler(method="committee", models=LINEAR, action="relabel")
    kept, labels = relabel.fit_resample(X, noisy_wine["y"].to_numpy())
    assert len(kept) == len(X) and list(labels) == noisy_wine["y"].to_list()
    flagged = [i for i, s in enumerate(relabel.suggested_labels_) if s is not None]
    assert flagged == sorted(sampler.audit_["row_id"].to_list())
