"""A replace killed between any two of its steps is finished by the next command there.

Source: the requirement of issue 9 ("a kill between the two renames of an
overwrite leaves no run folder at the path"; "the next command that touches
that path finishes or rolls back the interrupted swap, and says so"), and the
atomicity of rename(2) on one file system (POSIX). Each replacing run is a real
process killed with SIGKILL at the named step; the next command runs in this
process; the file system is the real one.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from output_fixtures import curate_run, leftovers, rows_in, write_tables

from curate.api import run
from curate.cli import main
from curate.io.output_swap import STEPS

SWAP_STEPS = STEPS[STEPS.index("journal"):]


@pytest.fixture
def killed(tmp_path: Path, request: pytest.FixtureRequest) -> Path:
    """A folder whose small run was being replaced by the large one when SIGKILL came."""
    write_tables(tmp_path)
    run(tmp_path / "small.toml", write=True)
    gone = curate_run(["run", "large.toml", "--quiet", "--overwrite"], tmp_path,
                      signal_at=f"{request.param}:KILL")
    assert gone.returncode == -9, gone.stderr
    assert ".run.swap.json" in leftovers(tmp_path), "the kill came before the journal"
    return tmp_path


@pytest.mark.parametrize("killed", SWAP_STEPS, indirect=True)
def test_reading_the_run_finishes_the_replace(killed: Path,
                                              capsys: pytest.CaptureFixture[str]) -> None:
    """``curate why`` on the path (here in this process) puts the complete new folder in
    place, says so, and leaves nothing else behind (the journal is written only once the new
    folder is complete)."""
    assert main(["why", "0", "--run", str(killed / "run")]) == 0
    out, err = capsys.readouterr()
    assert "finished the replace" in err and "row 0 was kept" in out
    assert rows_in(killed / "run") == 150
    assert leftovers(killed) == []


@pytest.mark.parametrize("killed", ["old-moved"], indirect=True)
def test_the_next_run_finishes_the_replace_first(killed: Path,
                                                 capsys: pytest.CaptureFixture[str]) -> None:
    """Killed with no folder at the path at all: a run without --overwrite finishes the old
    replace, says so, and then refuses to replace the folder that is there again (exit 2)."""
    assert not (killed / "run").exists()
    assert main(["run", str(killed / "small.toml"), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "finished the replace" in err and "already exists" in err
    assert rows_in(killed / "run") == 150
    assert leftovers(killed) == []
