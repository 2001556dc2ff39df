"""An output path is claimed by one run at a time, from before the work to the very end.

Source: the requirements of issue 9 ("two runs into the same output at once",
"a stale lock from a killed process is recognised and taken over", "released
on every exit path"); that a killed process's ``flock`` is released by the
kernel is POSIX practice (flock(2)). Real processes, real signals, real files.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from output_fixtures import curate_run, leftovers, resume, rows_in, start, wait_stopped, write_tables

from curate.api import run
from curate.cli import main


@pytest.fixture
def folder(tmp_path: Path) -> Path:
    write_tables(tmp_path)
    return tmp_path


def test_second_run_fails_at_once_and_names_the_first(
        folder: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """While run A (another process) holds the path, run B (here, even with --overwrite) stops
    with exit 2 naming A's pid and replaces nothing; once A has finished, an overwrite
    replaces A's folder."""
    first = start(["run", "small.toml", "--quiet"], folder, signal_at="claimed:STOP")
    wait_stopped(first)
    assert (folder / ".run.lock").is_file()
    assert main(["run", str(folder / "large.toml"), "--quiet", "--overwrite"]) == 2
    err = capsys.readouterr().err
    assert f"pid {first.pid}" in err and "Traceback" not in err
    assert not (folder / "run").exists()
    code, err = resume(first)
    assert code == 0, err
    assert rows_in(folder / "run") == 60
    run(folder / "large.toml", write=True, overwrite=True)
    assert rows_in(folder / "run") == 150
    assert leftovers(folder) == []


def test_stale_lock_and_stray_partial_of_a_killed_run_are_cleared(
        folder: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """A run killed while writing leaves its lock and a partial folder; the next run at that
    path (here) takes the lock over, removes the partial, says both, and writes the folder."""
    killed = curate_run(["run", "small.toml", "--quiet"], folder, signal_at="writing:KILL")
    assert killed.returncode == -9
    left = leftovers(folder)
    assert ".run.lock" in left and any(n.startswith(".run.partial-") for n in left), left
    assert not (folder / "run").exists()
    assert main(["run", str(folder / "small.toml"), "--quiet"]) == 0
    err = capsys.readouterr().err
    assert "took over the lock" in err and "no longer running" in err and ".run.partial-" in err
    assert leftovers(folder) == [] and rows_in(folder / "run") == 60


@pytest.mark.parametrize(("how", "step", "code"), [("TERM", "written", 143),
                                                  ("INT", "writing", 130)])
def test_signal_releases_everything(folder: Path, how: str, step: str, code: int) -> None:
    """SIGTERM or Ctrl-C while writing an overwrite: exit 143 or 130, the earlier run folder
    stays as it was, and no lock, partial folder or journal is left."""
    run(folder / "small.toml", write=True)
    before = sorted(p.name for p in (folder / "run").iterdir())
    stopped = curate_run(["run", "large.toml", "--quiet", "--overwrite"], folder,
                         signal_at=f"{step}:{how}")
    assert stopped.returncode == code, stopped.stderr
    assert "stopped" in stopped.stderr and "Traceback" not in stopped.stderr
    assert leftovers(folder) == []
    assert sorted(p.name for p in (folder / "run").iterdir()) == before
    assert rows_in(folder / "run") == 60


def test_created_folders_are_removed_when_a_run_stops(folder: Path) -> None:
    """The folders made to hold the lock go again when the run writes nothing."""
    stopped = curate_run(["run", "small.toml", "--quiet", "--out", "new/deeper/run"], folder,
                         signal_at="claimed:TERM")
    assert stopped.returncode == 143, stopped.stderr
    assert not (folder / "new").exists()
