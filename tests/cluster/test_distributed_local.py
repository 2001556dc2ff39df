"""The cluster settings and the partitioned selection, without starting a cluster.

Outside references: scikit-learn's StratifiedKFold (its folds keep class
proportions: per class, fold counts differ by at most one, and fold sizes
differ by at most one); Hart 1968's consistency of a condensed set, checked
with scikit-learn's KNeighborsClassifier(n_neighbors=1); scikit-learn's
bundled wine set.
"""

from __future__ import annotations

import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import open_data
import pytest
from sklearn.model_selection import StratifiedKFold
from sklearn.neighbors import KNeighborsClassifier
from sklearn.preprocessing import MinMaxScaler

from curate.cluster.partitioned import partitioned_selection, stratified_parts
from curate.cluster.session import cluster_session
from curate.cluster.stage import kneighbors_on_cluster
from curate.errors import PipelineFileError
from curate.methods.condensing import cnn
from curate.methods.editing import enn
from curate.neighbours import kneighbors
from curate.settings import ClusterSettings, EngineSettings
from curate.space import Space
from curate.spec import spec_from_dict

BASE = {"input": {"path": "x.csv", "label": "y"}, "stages": [{"method": "enn"}]}


def _wine() -> tuple[np.ndarray, np.ndarray]:
    X, y = open_data.load("wine")
    return MinMaxScaler().fit_transform(X), y


@pytest.mark.parametrize("parts", [2, 3, 5])
def test_partitions_keep_class_proportions_like_stratified_kfold(parts: int) -> None:
    """Reference: scikit-learn's StratifiedKFold test folds on the same labels."""
    _, y = _wine()
    ours = stratified_parts(y, parts, seed=4)
    folds = [test for _, test in StratifiedKFold(parts).split(np.zeros(len(y)), y)]
    assert sorted(len(p) for p in ours) == sorted(len(f) for f in folds)
    assert np.array_equal(np.sort(np.concatenate(ours)), np.arange(len(y)))
    for c in np.unique(y):
        counts = [int((y[p] == c).sum()) for p in ours]
        reference = [int((y[f] == c).sum()) for f in folds]
        assert max(counts) - min(counts) <= 1
        assert sorted(counts) == sorted(reference)


def test_partitions_depend_on_the_seed_only() -> None:
    _, y = _wine()
    same = [p.tolist() for p in stratified_parts(y, 3, seed=1)]
    assert same == [p.tolist() for p in stratified_parts(y, 3, seed=1)]
    assert same != [p.tolist() for p in stratified_parts(y, 3, seed=2)]


def test_partitioned_cnn_is_consistent_on_the_union_and_each_part() -> None:
    """Hart 1968: CNN's kept rows label its whole input correctly under 1-NN (scikit-learn)."""
    X, y = _wine()
    space = Space.from_matrix(X)
    sel = partitioned_selection(cnn, space, y, removable=np.ones(len(y), bool), seed=3,
                                params={"order": "shuffled"}, parts=3)
    union = np.sort(np.concatenate([sel.kept, sel.removed[sel.step == 2]]))
    one_nn = KNeighborsClassifier(n_neighbors=1).fit(X[sel.kept], y[sel.kept])
    assert np.array_equal(one_nn.predict(X[union]), y[union])
    for part in stratified_parts(y, 3, seed=3):
        survived = np.setdiff1d(part, sel.removed[sel.step == 1])
        one_nn = KNeighborsClassifier(n_neighbors=1).fit(X[survived], y[survived])
        assert np.array_equal(one_nn.predict(X[part]), y[part])
    assert sel.info["approximate"] is True and sel.info["union_rows"] == len(union)


def test_partitioned_selection_maps_evidence_to_stage_positions() -> None:
    """Every record's row, neighbours and kept_as are rows of the stage; kept_as is kept."""
    X, y = _wine()
    sel = partitioned_selection(cnn, Space.from_matrix(X), y, removable=np.ones(len(y), bool),
                                seed=0, params={"order": "input"}, parts=2)
    assert np.array_equal(np.sort(np.concatenate([sel.kept, sel.removed])), np.arange(len(y)))
    kept = set(sel.kept.tolist())
    for row, keeper, near in zip(sel.removed, sel.kept_as, sel.neighbours, strict=True):
        assert keeper in kept and y[keeper] == y[row]  # Hart: absorbed by a same-label row
        assert near.min() >= 0 and near.max() < len(y)
    assert set(np.unique(sel.step).tolist()) <= {1, 2}


def test_protected_rows_survive_both_passes() -> None:
    X, y = _wine()
    removable = np.ones(len(y), bool)
    removable[::7] = False
    sel = partitioned_selection(cnn, Space.from_matrix(X), y, removable=removable, seed=0,
                                params={"order": "shuffled"}, parts=2)
    assert set(np.flatnonzero(~removable)) <= set(sel.kept.tolist())


def test_partitioned_editing_runs_too() -> None:
    """A method of any family can be partitioned; with one part the union pass sees ENN's output."""
    X, y = _wine()
    sel = partitioned_selection(enn, Space.from_matrix(X), y, removable=np.ones(len(y), bool),
                                seed=0, params={"k": 3}, parts=1)
    first = enn(Space.from_matrix(X), y, removable=np.ones(len(y), bool), k=3)
    assert set(first.removed.tolist()) <= set(sel.removed.tolist())


def test_without_a_session_the_local_engine_answers() -> None:
    """A space that names a cluster but has no open session gets the local engine's answer."""
    X, _ = _wine()
    plain = Space.from_matrix(X)
    named = Space.from_matrix(X, engine=EngineSettings(cluster_address="tcp://127.0.0.1:1"))
    for got, want in zip(kneighbors_on_cluster(named, 4), kneighbors(plain, 4), strict=True):
        assert np.array_equal(got, want)


def test_no_address_no_session() -> None:
    with cluster_session(ClusterSettings()) as session:
        assert session is None


def test_cluster_section_is_checked() -> None:
    spec = spec_from_dict({**BASE, "cluster": {"address": "local:2", "partitions": 4,
                                                "block_rows": 100, "retries": 0}})
    assert spec.cluster.partitions == 4 and spec.run.engine.cluster_address == "local:2"
    assert spec_from_dict(BASE).run.engine.cluster_address is None
    for bad in ({"address": "local:0"}, {"address": "local:x"}, {"partitions": 0},
                {"block_rows": 0}, {"timeout": 0}, {"workers": 2}):
        with pytest.raises(PipelineFileError, match=r"\[cluster\]"):
            spec_from_dict({**BASE, "cluster": bad})


def test_a_local_run_does_not_import_dask(tmp_path: Path) -> None:
    """Dask is an optional extra: without an address it is not even imported."""
    (tmp_path / "t.csv").write_text("x,y\n0.0,a\n0.1,a\n0.2,b\n5.0,b\n5.1,b\n5.2,a\n")
    script = textwrap.dedent(f"""
        import sys
        from curate.api import run
        run({{"input": {{"path": "t.csv", "label": "y"}},
              "stages": [{{"method": "enn", "k": 1, "max_removed_share": 1.0}}]}},
            base={str(tmp_path)!r})
        print(sorted(m for m in sys.modules if m.split(".")[0] in ("dask", "distributed")))
    """)
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          check=True)
    assert done.stdout.strip() == "[]"
