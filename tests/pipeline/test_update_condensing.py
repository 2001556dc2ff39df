"""Condensing in an update keeps the kept set consistent on old and new rows (Hart 1968).

Hart's consistency: 1-NN over the kept rows labels every row that reached the
stage with its own label. The check uses scikit-learn's KNeighborsClassifier
(brute force) on the run's space, not curate's engine. Copies with
conflicting labels are removed first, so every row can be labelled
correctly. The result may differ from a full run, and the summary says so.
Tables: scikit-learn's bundled breast cancer and wine, split 80/20 and 98/2.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import polars as pl
import pytest
from sklearn.neighbors import KNeighborsClassifier, NearestNeighbors
from update_fixtures import Case, open_table, pipeline, run_and_update, stage_report

FIRST = [{"name": "conflicts", "method": "conflicting-duplicates"},
         {"name": "copies", "method": "exact-duplicates"}]


def _stage_rows(case: Case, stage: str) -> tuple[np.ndarray, np.ndarray]:
    """Input positions that reached ``stage``, and those it kept."""
    result = case.updated
    ids = result.prepared.ids.to_numpy()
    audit = result.audit
    before = audit.filter(audit["stage"].is_in(["conflicts", "copies", "mislabels"]))
    reached = ~np.isin(ids, before["row_id"].to_numpy())
    kept = reached & ~np.isin(ids, audit.filter(audit["stage"] == stage)["row_id"].to_numpy())
    return np.flatnonzero(reached), np.flatnonzero(kept)


def assert_consistent(case: Case, stage: str) -> None:
    """scikit-learn's 1-NN over the stage's kept rows labels every row of the stage right."""
    reached, kept = _stage_rows(case, stage)
    matrix = case.updated.prepared.space.matrix
    labels = case.updated.prepared.space_labels
    knn = KNeighborsClassifier(n_neighbors=1, algorithm="brute").fit(matrix[kept], labels[kept])
    wrong = reached[knn.predict(matrix[reached]) != labels[reached]]
    ids = case.updated.prepared.ids.to_numpy()
    assert len(wrong) == 0, f"1-NN mislabels rows {ids[wrong][:5].tolist()}"


@pytest.mark.parametrize("method", ["cnn", "fcnn", "rnn"])
@pytest.mark.parametrize("share", [0.8, 0.98])
def test_update_keeps_the_store_consistent(tmp_path: Path, method: str, share: float) -> None:
    """Consistent on every row of the stage; the old kept rows all stay kept."""
    table = open_table("breast_cancer", flip=0.05, seed=21)
    stages = FIRST + [{"name": "condense", "method": method, "max_removed_share": 0.99}]
    case = run_and_update(tmp_path, table, pipeline(stages), share)
    assert_consistent(case, "condense")
    report = stage_report(case, 2)
    assert report["mode"] == "incremental" and report["equals_full_run"] is False
    assert "Hart 1968" in report["note"]
    assert case.updated.summary["update"]["equals_full_run"] is False
    before = pl.read_parquet(tmp_path / "run0" / "kept.parquet")["row_id"].to_numpy()
    assert np.isin(before, case.updated.kept["row_id"].to_numpy()).all()


def assert_nearest_kept(case: Case, stage: str) -> None:
    """Every row the stage removed as absorbed names as kept_as its nearest kept row
    (scikit-learn's nearest neighbour among the stage's kept rows), at the recorded distance."""
    _, kept = _stage_rows(case, stage)
    prep = case.updated.prepared
    audit = case.updated.audit
    absorbed = audit.filter((audit["reason"] == "absorbed") & (audit["stage"] == stage))
    ids = prep.ids.to_numpy()
    order = np.argsort(ids)
    rows = order[np.searchsorted(ids, absorbed["row_id"].to_numpy(), sorter=order)]
    dist, near = NearestNeighbors(n_neighbors=1, algorithm="brute").fit(
        prep.space.matrix[kept]).kneighbors(prep.space.matrix[rows])
    assert (ids[kept[near[:, 0]]] == absorbed["kept_as"].to_numpy()).all()
    recorded = np.array([d[0] for d in absorbed["neighbour_distances"].to_list()])
    assert np.allclose(recorded, dist[:, 0], rtol=1e-12, atol=1e-12)


def test_absorbed_rows_point_to_their_nearest_kept_row(tmp_path: Path) -> None:
    """New rows the store already labels correctly are removed as absorbed, pointing to
    their nearest kept row, which carries their label; so do old rows whose nearest kept row
    changed. Two updates in a row."""
    table = open_table("wine", flip=0.05, seed=22)
    stages = FIRST + [{"name": "condense", "method": "fcnn", "max_removed_share": 0.99}]
    case = run_and_update(tmp_path, table, pipeline(stages), 0.8, parts=2)
    assert_consistent(case, "condense")
    assert_nearest_kept(case, "condense")
    absorbed = case.updated.audit.filter(case.updated.audit["reason"] == "absorbed")
    new = set(table["reading"].slice(case.old_rows).to_list())
    assert any(r in new for r in absorbed["row_id"].to_list())


def test_demo_stages_after_an_update(tmp_path: Path) -> None:
    """The demo's stages (copies, ENN, FCNN): copies and ENN equal the full run exactly (their
    records compared), FCNN stays consistent."""
    table = open_table("breast_cancer", copies=30, flip=0.06, seed=23)
    stages = [{"name": "copies", "method": "exact-duplicates"},
              {"name": "mislabels", "method": "enn", "max_removed_share": 0.9},
              {"name": "condense", "method": "fcnn", "max_removed_share": 0.99}]
    case = run_and_update(tmp_path, table, pipeline(stages), 0.8)
    assert_consistent(case, "condense")
    assert_nearest_kept(case, "condense")  # found through ENN's lists where they list one
    for stage in ("copies", "mislabels"):
        ours = case.updated.audit.filter(case.updated.audit["stage"] == stage).sort("row_id")
        full = case.oracle.audit.filter(case.oracle.audit["stage"] == stage).sort("row_id")
        assert ours.drop("label").equals(full.drop("label"))
    assert [s["equals_full_run"] for s in case.updated.summary["update"]["stages"]] == \
        [True, True, False]
