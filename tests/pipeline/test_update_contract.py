"""What an update promises around the stages: its input, its errors, its space, its files.

Sources: common practice, no source (ids identify rows, so new rows must not
reuse old ids; an update continues a run, so a changed pipeline needs a full
run); the fitted-range count is checked against numpy's minimum and maximum of
the run's rows. Table: scikit-learn's bundled wine.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import polars as pl
import pytest
from update_fixtures import assert_same_as_full_run, open_table, pipeline, run_and_update

import curate
from curate.api import update
from curate.errors import InputError, UsageError

ENN = [{"method": "enn", "max_removed_share": 0.9}]


def _run(folder: Path, table: pl.DataFrame, stages: list[dict[str, object]] = ENN,
         old: int = 140) -> dict[str, object]:
    pipe = pipeline(stages)
    table.head(old).write_csv(folder / "part0.csv")
    curate.run(pipe, base=folder, out=folder / "run0")
    table.slice(old).write_csv(folder / "part1.csv")
    return pipe


def test_every_run_keeps_the_update_state(tmp_path: Path) -> None:
    """state.json, rows.parquet (every row id in input order) and the lists of ENN's rows, one
    neighbour longer than its k = 3 (the vote's tie notes read the next neighbour)."""
    table = open_table("wine", seed=41)
    _run(tmp_path, table)
    state = tmp_path / "run0" / "update"
    facts = json.loads((state / "state.json").read_text())
    assert facts["stages"][0]["lists"] == 4 and len(facts["space"]["sha256"]) == 64
    rows = pl.read_parquet(state / "rows.parquet")
    assert rows["row_id"].to_list() == table["reading"].head(140).to_list()
    with np.load(state / "lists.npz") as lists:
        assert lists["s0_nbr"].shape == (140, 4)


def test_new_ids_that_clash_are_an_input_error(tmp_path: Path) -> None:
    """Exit code 3, naming the ids that the run already has."""
    table = open_table("wine", seed=42)
    pipe = _run(tmp_path, table)
    clash = pl.concat([table.slice(140, 5), table.slice(3, 2)])
    clash.write_csv(tmp_path / "part1.csv")
    with pytest.raises(InputError) as caught:
        update(pipe, base=tmp_path, run=tmp_path / "run0", new=tmp_path / "part1.csv")
    assert caught.value.exit_code == 3
    for row_id in table["reading"].slice(3, 2).to_list():
        assert str(row_id) in caught.value.message


def test_old_run_folder_without_state_says_rerun_once(tmp_path: Path) -> None:
    """A run folder from before update states: a clear error telling to rerun once."""
    table = open_table("wine", seed=43)
    pipe = _run(tmp_path, table)
    shutil.rmtree(tmp_path / "run0" / "update")
    with pytest.raises(UsageError) as caught:
        update(pipe, base=tmp_path, run=tmp_path / "run0", new=tmp_path / "part1.csv")
    assert caught.value.exit_code == 2 and "rerun" in str(caught.value)


def test_changed_pipeline_needs_refit(tmp_path: Path) -> None:
    """k changed since the run: exit code 2, the key named, --refit suggested."""
    table = open_table("wine", seed=44)
    pipe = _run(tmp_path, table)
    changed = pipe | {"stages": [ENN[0] | {"k": 5}]}
    with pytest.raises(UsageError) as caught:
        update(changed, base=tmp_path, run=tmp_path / "run0", new=tmp_path / "part1.csv")
    assert "k" in caught.value.message and "--refit" in str(caught.value)


def test_new_rows_must_have_the_run_columns(tmp_path: Path) -> None:
    """A missing column is an input error naming it."""
    table = open_table("wine", seed=45)
    pipe = _run(tmp_path, table)
    table.slice(140).drop("c4").write_csv(tmp_path / "part1.csv")
    with pytest.raises(InputError, match="'c4'"):
        update(pipe, base=tmp_path, run=tmp_path / "run0", new=tmp_path / "part1.csv")


def test_missing_new_rows_name_the_option(tmp_path: Path) -> None:
    """A --new path that does not exist: exit code 2, the path and the option named."""
    pipe = _run(tmp_path, open_table("wine", seed=49))
    with pytest.raises(UsageError) as caught:
        update(pipe, base=tmp_path, run=tmp_path / "run0", new=tmp_path / "nothing.csv")
    assert "nothing.csv" in caught.value.message and "--new" in str(caught.value)


def test_rows_outside_the_fitted_ranges_are_counted(tmp_path: Path) -> None:
    """The count equals the new rows with a value beyond the run rows' minimum or maximum
    (numpy on the raw values), and the space keeps the run's scaling."""
    table = open_table("wine", seed=46)
    pipe = _run(tmp_path, table)
    result = update(pipe, base=tmp_path, run=tmp_path / "run0", new=tmp_path / "part1.csv")
    features = [c for c in table.columns if c.startswith("c")]
    old = table.head(140).select(features).to_numpy()
    new = table.slice(140).select(features).to_numpy()
    beyond = ((new < old.min(axis=0)) | (new > old.max(axis=0))).any(axis=1)
    facts = result.summary["update"]
    assert facts["rows_outside_fitted_ranges"] == int(beyond.sum()) > 0
    assert "scaling" in facts["space"]
    # range scaling fitted on the run's rows: new rows may lie outside [0, 1]
    matrix = result.prepared.space.matrix
    assert np.allclose(matrix[:140].min(axis=0), 0) and np.allclose(matrix[:140].max(axis=0), 1)


def test_chained_updates_keep_the_first_runs_space(tmp_path: Path) -> None:
    """Yesterday's scaling stays: after two updates the space is still fitted on the first
    run's rows (same fitted ranges in the state), and the result equals that full run."""
    table = open_table("wine", seed=47, flip=0.1)
    case = run_and_update(tmp_path, table, pipeline(ENN), 0.8, parts=2)
    assert_same_as_full_run(case)
    first = json.loads((tmp_path / "run0" / "update" / "state.json").read_text())
    last = json.loads((tmp_path / "run2" / "update" / "state.json").read_text())
    assert first["space"]["fit"] == last["space"]["fit"]


def test_refit_is_a_full_run_on_old_and_new_rows(tmp_path: Path) -> None:
    """--refit: the same kept rows and audit as curate.run on all rows (space refitted)."""
    table = open_table("wine", seed=48, flip=0.1)
    pipe = _run(tmp_path, table)
    result = update(pipe, base=tmp_path, run=tmp_path / "run0", new=tmp_path / "part1.csv",
                    refit=True)
    table.write_csv(tmp_path / "all.csv")
    full = curate.run(pipe | {"input": pipe["input"] | {"path": "all.csv"}}, base=tmp_path)
    assert result.kept["row_id"].to_list() == full.kept["row_id"].to_list()
    assert result.audit.equals(full.audit)
    assert result.summary["update"]["refit"] is True
