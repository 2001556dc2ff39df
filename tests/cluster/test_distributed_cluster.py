"""The same pipeline on a Dask LocalCluster with two worker processes.

Outside references: scikit-learn's bundled wine and breast cancer sets; for
editing and duplicate stages the single-machine run (the cluster only splits
the query rows, so every kept row and audit record must be identical); for
condensing, Hart 1968's consistency of a condensed set checked with
scikit-learn's KNeighborsClassifier(n_neighbors=1); for the partitions,
scikit-learn's StratifiedKFold definition (class counts per part differ by at
most one).
"""

from __future__ import annotations

import html
import json
from collections.abc import Callable, Iterator
from pathlib import Path

import numpy as np
import pytest
from cluster_fixtures import local_cluster, run_pipeline, write_bundled
from sklearn.neighbors import KNeighborsClassifier

from curate.cli import main
from curate.cluster.partitioned import partitioned_selection, stratified_parts
from curate.methods import METHODS


@pytest.fixture(scope="module")
def address() -> Iterator[str]:
    with local_cluster() as where:
        yield where


def _same_run(local, remote) -> None:
    assert remote.kept["row_id"].to_list() == local.kept["row_id"].to_list()
    assert remote.audit.equals(local.audit), "audit records differ between local and cluster runs"


@pytest.mark.parametrize(("name", "block"), [("wine", 40), ("breast_cancer", 40), ("digits", 500)])
def test_enn_on_cluster_equals_local(address: str, tmp_path: Path, name: str, block: int) -> None:
    """Editing: neighbour queries split in blocks over two workers give the local run exactly.

    Digits (integer pixels, many tied distances) is large enough that the local
    run's automatic engine choice differs from the one each block makes, so ties
    must be broken the same way by both.
    """
    path = write_bundled(name, tmp_path)
    stages = [{"method": "enn", "k": 3, "max_removed_share": 1.0}]
    local = run_pipeline(path, stages)
    remote = run_pipeline(path, stages, {"address": address, "block_rows": block})
    _same_run(local, remote)
    assert local.audit.height > 0
    info = remote.summary["stages"][0]["info"]["cluster"]
    assert info["address"] == address and info["tasks"] >= 3


def test_approximate_asked_on_a_cluster_searches_exactly(address: str, tmp_path: Path) -> None:
    """The approximate index is local only: on a cluster the blocks are searched exactly,
    so the run equals the local exact run, and summary.json says so."""
    from curate.api import run

    path = write_bundled("wine", tmp_path)
    stages = [{"method": "enn", "k": 3, "max_removed_share": 1.0}]
    local = run_pipeline(path, stages)
    remote = run({"input": {"path": str(path), "label": "y"}, "stages": stages,
                  "run": {"backend": "approximate"},
                  "cluster": {"address": address, "block_rows": 40}}, base=path.parent)
    _same_run(local, remote)
    assert remote.summary["engine"]["exact"] is True
    assert "cluster" in remote.summary["engine"]["reason"]
    engine = remote.summary["stages"][0]["info"]["engine"]
    assert engine["backends"] == ["fast"] and engine["exact"] is True


def test_duplicates_on_cluster_equal_local(address: str, tmp_path: Path) -> None:
    """Duplicates: exact and radius (near) copies planted in breast cancer, found identically."""
    path = write_bundled("breast_cancer", tmp_path, copies=12, near=15, seed=3)
    stages = [{"method": "exact-duplicates"},
              {"method": "near-duplicates", "radius": 0.01, "max_removed_share": 1.0}]
    local = run_pipeline(path, stages)
    remote = run_pipeline(path, stages, {"address": address, "block_rows": 100})
    _same_run(local, remote)
    assert local.summary["stages"][0]["removed"] == 12
    assert local.summary["stages"][1]["removed"] >= 15
    assert remote.summary["stages"][1]["info"]["cluster"]["tasks"] >= 6


def _one_nn_errors(X: np.ndarray, y: np.ndarray, store: np.ndarray, rows: np.ndarray) -> list[int]:
    """Rows that scikit-learn's 1-NN, fitted on ``store``, labels wrongly (Hart 1968)."""
    model = KNeighborsClassifier(n_neighbors=1).fit(X[store], y[store])
    return rows[model.predict(X[rows]) != y[rows]].tolist()


def test_cnn_on_cluster_is_consistent(address: str, tmp_path: Path) -> None:
    """Condensing per stratified partition, then over the union (Cano, Herrera and Lozano 2005).

    Guaranteed, by Hart 1968's consistency of CNN's output on its own input:
    1-NN on the final kept rows labels every row of the union pass's input
    correctly, and each partition's kept rows label that partition correctly.
    """
    path = write_bundled("wine", tmp_path)
    stages = [{"method": "cnn", "max_removed_share": 1.0}]
    result = run_pipeline(path, stages, {"address": address, "partitions": 2}, seed=5)
    X, y = result.prepared.space.matrix, result.prepared.space_labels
    kept = result.kept_positions
    step = dict(zip(result.audit["row_id"].to_list(), result.audit["step"].to_list(), strict=True))
    ids = result.prepared.ids.to_list()
    union = np.sort(np.concatenate([kept, [i for i, r in enumerate(ids) if step.get(r) == 2]]))
    assert _one_nn_errors(X, y, kept, union) == []
    for part in stratified_parts(y, 2, seed=5):
        survived = part[[step.get(ids[i]) != 1 for i in part]]
        assert _one_nn_errors(X, y, survived, part) == []
    info = result.summary["stages"][0]["info"]
    assert info["approximate"] is True and "approximates" in info["note"]
    assert info["partitions"] == 2 and info["union_rows"] == len(union)


def test_cnn_on_cluster_equals_partitioned_run_here(address: str, tmp_path: Path) -> None:
    """Agreement with the slow, obvious version: the same partitions run one by one here."""
    path = write_bundled("wine", tmp_path)
    stages = [{"method": "fcnn", "max_removed_share": 1.0}]
    result = run_pipeline(path, stages, {"address": address, "partitions": 3}, seed=2)
    space = result.prepared.space
    here = partitioned_selection(METHODS["fcnn"].func, space, result.prepared.space_labels,
                                 removable=np.ones(space.n, bool), seed=2, params={}, parts=3)
    assert result.kept_positions.tolist() == here.kept.tolist()


def test_curate_run_with_cluster_section(address: str, tmp_path: Path,
                                         make_pipeline: Callable[..., Path]) -> None:
    """End to end: `curate run` with [cluster] address writes a complete run folder."""
    write_bundled("wine", tmp_path)
    stages = [{"method": "enn", "k": 3}, {"method": "cnn", "max_removed_share": 1.0}]
    pipeline = make_pipeline(None, stages, name="wine.csv",
                             extra={"cluster": {"address": address, "block_rows": 50}})
    assert main(["run", str(pipeline), "--quiet"]) == 0
    summary = json.loads((tmp_path / "run" / "summary.json").read_text())
    first, second = summary["stages"]
    assert first["info"]["cluster"]["address"] == address
    assert second["info"]["approximate"] is True
    for name in ("kept.parquet", "removed.parquet", "audit.parquet", "report.html"):
        assert (tmp_path / "run" / name).is_file()
    assert summary["engine"]["cluster"] == address
    # The report tells the reader that the partitioned result approximates the local one.
    report = (tmp_path / "run" / "report.html").read_text()
    assert html.escape(second["info"]["note"]) in report


def test_cluster_flag_overrides_the_file(address: str, tmp_path: Path,
                                         make_pipeline: Callable[..., Path]) -> None:
    """`curate run --cluster ADDRESS` on a file without [cluster] runs on that cluster."""
    write_bundled("wine", tmp_path)
    pipeline = make_pipeline(None, [{"method": "enn", "k": 3}], name="wine.csv",
                             extra={"output": {"folder": "run", "report": False}})
    assert main(["run", str(pipeline), "--quiet", "--cluster", address]) == 0
    summary = json.loads((tmp_path / "run" / "summary.json").read_text())
    assert summary["stages"][0]["info"]["cluster"]["address"] == address
