"""Ctrl-C at start-up, a closed output pipe and no writable kernel cache end cleanly.

Each case runs the real command in its own process, as a user would meet it:

* Ctrl-C is a real SIGINT. To hit a chosen moment of start-up exactly, a
  ``sitecustomize`` module (Python's documented start-up hook, in the site
  module) sends it when a chosen module starts to import; a schema module that
  sleeps lets the test send it from outside at a known moment too. Expected:
  exit 130 (128 + SIGINT, as shells report it), one line, no traceback, nothing
  written.
* A closed pipe is a reader that stopped reading (``curate ... | head``): exit 141
  (128 + SIGPIPE), nothing on stderr. Python's documentation on SIGPIPE ("Note on
  SIGPIPE", signal module) describes the traceback this must avoid.
* numba's cache needs a writable folder next to the package or in the home
  folder (numba's documentation, "Cache sharing" / NUMBA_CACHE_DIR). Here neither
  is writable, for any user, root included: every ``__pycache__`` is a regular
  file and HOME lies below a regular file.
Every wait is bounded.
"""

from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import polars as pl
import pytest

import curate

TRIP = '''\
import os, signal, sys

_TARGET = os.environ.get("TRIP_ON_IMPORT")


class _Trip:
    """Send this process a real SIGINT when the named module starts to import."""

    def find_spec(self, name, path=None, target=None):
        if name == _TARGET:
            sys.meta_path.remove(self)
            os.kill(os.getpid(), signal.SIGINT)
        return None


if _TARGET:
    sys.meta_path.insert(0, _Trip())
'''

SLEEPY_SCHEMA = '''\
import time
from pathlib import Path
import pandera.polars as pa

Path(__file__).with_name("ready").write_text("importing")
time.sleep(120)


class Model(pa.DataFrameModel):
    x: float
'''


def start(folder: Path, *args: str, env: dict[str, str] | None = None,
          **options: object) -> subprocess.Popen[str]:
    return subprocess.Popen([sys.executable, "-m", "curate", *args], cwd=folder, text=True,
                            env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            **options)  # type: ignore[call-overload]


def project(folder: Path, stage: str = "exact-duplicates", extra: str = "") -> Path:
    """A small table (invented) and a pipeline file writing to ``run``; no safety limit."""
    pl.DataFrame({"x": [0.0, 0.1, 0.2, 0.3, 5.0, 5.1, 5.2, 5.3],
                  "y": ["a", "a", "a", "a", "b", "b", "b", "b"]}).write_csv(folder / "t.csv")
    path = folder / "p.toml"
    path.write_text(f'[input]\npath = "t.csv"\nlabel = "y"\n{extra}\n[[stages]]\n'
                    f'method = "{stage}"\nmax_removed_share = 1.0\n\n'
                    '[output]\nfolder = "run"\nreport = false\n')
    return path


def nothing_written(folder: Path) -> None:
    assert not (folder / "run").exists()
    assert not [p.name for p in folder.iterdir() if p.name.startswith(".run")]


def interrupted(done: tuple[int, str]) -> None:
    code, err = done
    assert code == 130, err
    assert "interrupted" in err and "Traceback" not in err, err
    assert len(err.strip().splitlines()) == 1, err


@pytest.mark.parametrize("module", ["curate.cli.pipeline", "polars", "pandera",
                                    "curate.neighbours.jit"])
def test_ctrl_c_during_start_up(tmp_path: Path, module: str) -> None:
    """While the command's modules, the table libraries, the schema library or the compiled
    kernels load: a run with a schema and ENN passes through every one of them."""
    hook = tmp_path / "hook"
    hook.mkdir()
    (hook / "sitecustomize.py").write_text(TRIP)
    (tmp_path / "m.py").write_text("import pandera.polars as pa\n\n\nclass Model(pa.DataFrameModel):"
                                   "\n    x: float\n")
    project(tmp_path, "enn", 'schema = "m.py:Model"')
    env = {**os.environ, "TRIP_ON_IMPORT": module,
           "PYTHONPATH": os.pathsep.join([str(hook), os.environ.get("PYTHONPATH", "")])}
    process = start(tmp_path, "run", "p.toml", "--quiet", env=env)
    out, err = process.communicate(timeout=300)
    interrupted((process.returncode, err))
    assert out == ""
    nothing_written(tmp_path)


def test_ctrl_c_from_outside_while_the_schema_loads(tmp_path: Path) -> None:
    (tmp_path / "m.py").write_text(SLEEPY_SCHEMA)
    project(tmp_path, extra='schema = "m.py:Model"')
    process = start(tmp_path, "run", "p.toml", "--quiet")
    deadline = time.monotonic() + 240
    while not (tmp_path / "ready").exists():
        assert process.poll() is None, process.communicate()
        assert time.monotonic() < deadline, "the command never reached the schema"
        time.sleep(0.05)
    process.send_signal(signal.SIGINT)
    _, err = process.communicate(timeout=60)
    interrupted((process.returncode, err))
    nothing_written(tmp_path)


@pytest.mark.parametrize("args", [["methods", "--json"], ["run", "p.toml", "--json"]])
def test_a_closed_pipe_ends_quietly(tmp_path: Path, args: list[str]) -> None:
    """The reader is gone before the command prints: exit 141, stderr silent. A run has
    finished its work by then, so its folder is complete."""
    project(tmp_path)
    process = start(tmp_path, *args)
    assert process.stdout is not None and process.stderr is not None
    process.stdout.close()
    with process.stderr:
        err = process.stderr.read()
    assert process.wait(timeout=300) == 141, err
    assert "Traceback" not in err and "Exception ignored" not in err and "Error" not in err, err
    if args[0] == "run":
        assert (tmp_path / "run" / "kept.parquet").is_file()


@pytest.fixture
def no_writable_cache(tmp_path: Path) -> tuple[Path, dict[str, str]]:
    """A copy of the package where numba can write no cache, and an environment to run it."""
    site = tmp_path / "site"
    shutil.copytree(Path(curate.__file__).parent, site / "curate",
                    ignore=shutil.ignore_patterns("__pycache__"))
    for folder in [site / "curate", *(p for p in (site / "curate").rglob("*") if p.is_dir())]:
        (folder / "__pycache__").write_text("a file where numba wants a folder\n")
    (tmp_path / "home").write_text("a file where the home folder should be\n")
    env = {k: v for k, v in os.environ.items() if k != "NUMBA_CACHE_DIR"}
    env |= {"PYTHONPATH": str(site), "HOME": str(tmp_path / "home" / "user"),
            "XDG_CACHE_HOME": str(tmp_path / "home" / "cache")}
    work = tmp_path / "work"
    work.mkdir()
    return work, env


def test_no_writable_kernel_cache_compiles_uncached_with_one_note(
        no_writable_cache: tuple[Path, dict[str, str]]) -> None:
    """--help works, and a CNN run (which loads every kernel and compiles some) works with
    the note once; never a traceback."""
    work, env = no_writable_cache
    project(work, "cnn")
    # without --quiet, which silences curate's warnings, this note among them
    for args in (["--help"], ["run", "p.toml"]):
        process = start(work, *args, env=env)
        _, err = process.communicate(timeout=300)
        assert process.returncode == 0, err
        assert "Traceback" not in err, err
        notes = [line for line in err.splitlines() if "no writable cache folder" in line]
        assert len(notes) == (0 if args == ["--help"] else 1), err
    assert (work / "run" / "kept.parquet").is_file()
