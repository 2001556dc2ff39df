"""A worker process that dies mid-run: the lost work is redone, or the run stops cleanly.

The method under test kills the worker process that runs it (``os._exit``),
which is what an out-of-memory kill looks like to Dask. Outside reference:
Dask's documented behaviour (the scheduler reruns the tasks of a dead worker
elsewhere, up to ``distributed.scheduler.allowed-failures`` times, then raises
``KilledWorker``), and the bundled wine set of scikit-learn.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Iterator
from pathlib import Path

import cloudpickle
import numpy as np
import pytest
from cluster_fixtures import local_cluster, write_bundled

from curate.api import run
from curate.cluster.partitioned import partitioned_selection
from curate.errors import ClusterError
from curate.methods import METHODS
from curate.methods.base import MethodInfo, Selection
from curate.methods.condensing import cnn
from curate.settings import Param


def dies_once(space, labels: np.ndarray, *, removable: np.ndarray, seed: int,
              marker: str) -> Selection:
    """CNN, but the first call anywhere kills its worker (the marker file is created atomically)."""
    try:
        os.close(os.open(marker, os.O_CREAT | os.O_EXCL))
    except FileExistsError:
        return cnn(space, labels, removable=removable, seed=seed)
    os._exit(1)


def always_dies(space, labels: np.ndarray, *, removable: np.ndarray, seed: int,
                marker: str) -> Selection:
    """Kills every worker that runs it."""
    os._exit(1)


def _info(key: str, func) -> MethodInfo:
    return MethodInfo(key=key, name=key, family="condensing", reference="test",
                      purpose="kill a worker", func=func, compares_classes=True,
                      runs_partitioned=True,
                      params=(Param("marker", str, "", "file that marks the first call"),),
                      reasons={"absorbed": "absorbed"})


@pytest.fixture(scope="module")
def address() -> Iterator[str]:
    # The dying methods live in this test module, which the workers cannot import:
    # send them by value.
    cloudpickle.register_pickle_by_value(sys.modules[__name__])
    try:
        # One rerun per task: a task that kills two workers in a row is given up.
        with local_cluster(**{"distributed.scheduler.allowed-failures": 1}) as where:
            yield where
    finally:
        cloudpickle.unregister_pickle_by_value(sys.modules[__name__])


@pytest.fixture
def dying(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setitem(METHODS, "dies-once", _info("dies-once", dies_once))
    monkeypatch.setitem(METHODS, "always-dies", _info("always-dies", always_dies))


def _spec(path: Path, method: str, address: str, marker: Path) -> dict:
    return {"input": {"path": str(path), "label": "y"}, "run": {"seed": 1},
            "stages": [{"method": method, "marker": str(marker), "max_removed_share": 1.0}],
            "cluster": {"address": address, "partitions": 2}}


def test_a_killed_worker_is_replaced_and_the_run_completes(address: str, tmp_path: Path,
                                                           dying: None) -> None:
    path = write_bundled("wine", tmp_path)
    marker = tmp_path / "died"
    result = run(_spec(path, "dies-once", address, marker), out=tmp_path / "run")
    assert marker.exists(), "no worker was killed: the test did not test anything"
    # The redone work gives what the same partitions give when run one by one here.
    space, labels = result.prepared.space, result.prepared.space_labels
    here = partitioned_selection(cnn, space, labels, removable=np.ones(space.n, bool), seed=1,
                                 params={}, parts=2)
    assert result.kept_positions.tolist() == here.kept.tolist()
    assert (tmp_path / "run" / "summary.json").is_file()


def test_a_task_that_keeps_killing_workers_stops_the_run_unwritten(address: str, tmp_path: Path,
                                                                   dying: None) -> None:
    path = write_bundled("wine", tmp_path)
    before = set(tmp_path.iterdir())
    with pytest.raises(ClusterError, match="died while computing") as caught:
        run(_spec(path, "always-dies", address, tmp_path / "never"), out=tmp_path / "run")
    assert caught.value.exit_code == 1 and "nothing was written" in str(caught.value)
    assert set(tmp_path.iterdir()) == before  # no run folder, finished or partial
