"""A full disk or a folder that cannot be written ends in a clear message and leaves nothing.

Source: the requirements of issue 9 ("full disk while writing: clean up, say
how much space was needed"; "read-only or unwritable output folder, checked
before the work starts"). Where the test may mount a small tmpfs (as root, with
the right to mount) the disk is really full; elsewhere the fault-injection hook
``CURATE_TEST_DISK_BYTES`` fails the writing the same way, and a folder without
write permission stands for the read-only one.
"""

from __future__ import annotations

import os
import subprocess
from collections.abc import Iterator
from pathlib import Path

import pytest
from output_fixtures import LIMIT, curate_run, write_tables

from curate.cli import main

ROOM = 12_288  # bytes left on the small disk: its lock and marker fit, the run folder does not
LIMIT_BYTES = 4_000  # the injected limit: a little more than the marker and the kept rows


def _mount(folder: Path, options: str) -> bool:
    """Mount a small tmpfs on ``folder``; False where this machine does not allow it."""
    try:
        done = subprocess.run(["mount", "-t", "tmpfs", "-o", options, "tmpfs", str(folder)],
                              capture_output=True, timeout=LIMIT, check=False)
    except OSError:
        return False
    return done.returncode == 0


def _unmount(folder: Path) -> None:
    subprocess.run(["umount", str(folder)], capture_output=True, timeout=LIMIT, check=True)


@pytest.fixture
def small_disk(tmp_path: Path) -> Iterator[tuple[Path, dict[str, str]]]:
    """A folder with only ``ROOM`` bytes free, and the environment a run there needs."""
    disk = tmp_path / "disk"
    disk.mkdir()
    if not _mount(disk, "size=1m"):
        yield disk, {"CURATE_TEST_DISK_BYTES": str(LIMIT_BYTES)}
        return
    try:
        stats = os.statvfs(disk)
        (disk / "filler").write_bytes(b"\0" * (stats.f_bavail * stats.f_frsize - ROOM))
        yield disk, {}
    finally:
        _unmount(disk)


@pytest.fixture
def locked_folder(tmp_path: Path) -> Iterator[Path]:
    """A folder this process's runs cannot write in: a read-only tmpfs where mounting is
    allowed, else a folder without write permission (which binds a user that is not root)."""
    folder = tmp_path / "locked"
    folder.mkdir()
    if _mount(folder, "ro,size=64k"):
        try:
            yield folder
        finally:
            _unmount(folder)
        return
    assert os.geteuid() != 0, "as root without the right to mount, no folder is unwritable"
    folder.chmod(0o555)
    try:
        yield folder
    finally:
        folder.chmod(0o755)


def test_full_disk_cleans_up_and_says_how_much_space_is_needed(
        tmp_path: Path, small_disk: tuple[Path, dict[str, str]]) -> None:
    disk, env = small_disk
    write_tables(tmp_path)
    before = sorted(p.name for p in disk.iterdir())
    done = curate_run(["run", "small.toml", "--quiet", "--out", str(disk / "run")], tmp_path,
                      env=env)
    assert done.returncode == 2, done.stderr
    err = done.stderr
    assert "is full" in err and "needs about" in err and "nothing was written" in err, err
    assert "Traceback" not in err
    assert sorted(p.name for p in disk.iterdir()) == before


def test_unwritable_output_folder_is_refused_before_the_work(
        tmp_path: Path, locked_folder: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """The input has no rows (exit 3 once read): exit 2 shows the folder was checked first."""
    write_tables(tmp_path)
    (tmp_path / "empty.csv").write_text("sepal length (cm),target\n")
    pipeline = tmp_path / "empty.toml"
    pipeline.write_text((tmp_path / "small.toml").read_text().replace("small.csv", "empty.csv"))
    code = main(["run", str(pipeline), "--quiet", "--out", str(locked_folder / "run")])
    err = capsys.readouterr().err
    assert code == 2, err
    assert f"cannot write {locked_folder / 'run'}: {locked_folder}" in err, err
    assert "nothing was written" in err
    assert list(locked_folder.iterdir()) == []
