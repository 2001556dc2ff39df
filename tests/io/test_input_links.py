"""Symbolic links on the input side: loops are named, not a traceback; every real file read once.

Outside references: the file system itself (real links made with os.symlink, the
loop the kernel reports as ELOOP), Python's glob module, which follows a link loop
under ``**`` and so lists one file many times (the behaviour curate must not
inherit), and polars reading the one real file, whose rows a run must count once.
One case runs the command as a real process, as a user would start it; the others
call the same entry point in this process (``curate.cli.main``), which is cheaper.
"""

from __future__ import annotations

import glob
import os
import subprocess
import sys
from pathlib import Path

import polars as pl
import pytest

from curate.cli import main
from curate.io.read import input_files


def curate(folder: Path, *args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "curate", *args], cwd=folder,
                          capture_output=True, text=True, timeout=300, check=False)


def curate_here(folder: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch,
                *args: str) -> subprocess.CompletedProcess[str]:
    """The same command through ``main`` in this process."""
    monkeypatch.chdir(folder)
    code = main(list(args))
    out, err = capsys.readouterr()
    return subprocess.CompletedProcess(["curate", *args], code, out, err)


def table(path: Path) -> pl.DataFrame:
    frame = pl.DataFrame({"x": [0.0, 0.1, 0.2, 5.0, 5.1, 5.2], "y": ["a", "a", "a", "b", "b", "b"]})
    path.parent.mkdir(parents=True, exist_ok=True)
    frame.write_csv(path)
    return frame


def pipeline(folder: Path, path: str, output: str = "run", extra: str = "") -> Path:
    file = folder / "p.toml"
    file.write_text(f'[input]\npath = "{path}"\nlabel = "y"\n{extra}\n[[stages]]\n'
                    f'method = "exact-duplicates"\n\n[output]\nfolder = "{output}"\n')
    return file


def clean_failure(done: subprocess.CompletedProcess[str], code: int, *words: str) -> None:
    assert done.returncode == code, done.stderr
    assert "Traceback" not in done.stderr and "hint:" in done.stderr, done.stderr
    for word in words:
        assert word in done.stderr, done.stderr


@pytest.fixture
def loop(tmp_path: Path) -> Path:
    """Two links pointing at each other: any path through them is a loop."""
    (tmp_path / "loop_a").symlink_to(tmp_path / "loop_b")
    (tmp_path / "loop_b").symlink_to(tmp_path / "loop_a")
    return tmp_path


def test_a_link_loop_in_the_input_path_end_to_end(loop: Path) -> None:
    table(loop / "t.csv")
    pipeline(loop, "loop_a/t.csv")
    done = curate(loop, "run", "p.toml", "--quiet")
    clean_failure(done, 2, "'path'", "cannot be resolved", "symbolic links")
    assert not (loop / "run").exists()


@pytest.mark.parametrize(("key", "extra", "output"), [
    ("protect_file", 'protect_file = "loop_a/review.csv"', "run"),
    ("folder", "", "loop_a/run"),
])
def test_a_link_loop_on_other_paths_is_named_with_its_key(
        loop: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch,
        key: str, extra: str, output: str) -> None:
    table(loop / "t.csv")
    pipeline(loop, "t.csv", output, extra)
    done = curate_here(loop, capsys, monkeypatch, "run", "p.toml", "--quiet")
    clean_failure(done, 2, f"'{key}'", "cannot be resolved", "symbolic links")
    assert not (loop / "run").exists()


def test_an_input_below_a_regular_file_is_a_clean_error(
        tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch) -> None:
    table(tmp_path / "t.csv")
    pipeline(tmp_path, "t.csv/readings.csv")
    clean_failure(curate_here(tmp_path, capsys, monkeypatch, "run", "p.toml", "--quiet"), 2,
                  "t.csv/readings.csv does not exist")
    assert not (tmp_path / "run").exists()


def test_a_glob_through_a_link_loop_reads_each_real_file_once(
        tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch) -> None:
    """Python's glob lists the one file once per level of the loop; curate reads it once."""
    frame = table(tmp_path / "data" / "site" / "t.csv")
    (tmp_path / "data" / "site" / "up").symlink_to(tmp_path / "data")
    pattern = str(tmp_path / "data" / "**" / "*.csv")
    assert len(glob.glob(pattern, recursive=True)) > 1  # the trap is real here
    # A second loop would make glob's count grow exponentially; curate's stays one.
    (tmp_path / "data" / "site" / "again").symlink_to(tmp_path / "data")
    assert input_files(Path(pattern)) == [tmp_path / "data" / "site" / "t.csv"]
    pipeline(tmp_path, "data/**/*.csv")
    done = curate_here(tmp_path, capsys, monkeypatch, "run", "p.toml", "--quiet", "--json")
    assert done.returncode == 0, done.stderr
    assert '"rows_in": ' + str(frame.height) in done.stdout


def test_each_real_file_once_in_folders_and_globs(tmp_path: Path) -> None:
    """A second name for the same file (a link, a hard link) does not read it twice; glob's
    rules otherwise hold (names starting with a dot are not matched by ``*``)."""
    table(tmp_path / "in" / "a.csv")
    table(tmp_path / "in" / "b.csv")
    os.link(tmp_path / "in" / "a.csv", tmp_path / "in" / "hard.csv")
    (tmp_path / "in" / "soft.csv").symlink_to(tmp_path / "in" / "b.csv")
    expected = [tmp_path / "in" / "a.csv", tmp_path / "in" / "b.csv"]
    assert input_files(tmp_path / "in") == expected
    table(tmp_path / "in" / ".hidden.csv")
    assert input_files(tmp_path / "in" / "*.csv") == expected
    assert sorted(map(Path, glob.glob(str(tmp_path / "in" / "*.csv")))) == sorted(
        [*expected, tmp_path / "in" / "hard.csv", tmp_path / "in" / "soft.csv"])
