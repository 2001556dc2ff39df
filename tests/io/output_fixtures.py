"""Real curate processes on the real file system, for the output-safety tests.

The tables are scikit-learn's bundled iris (no download): the content does not
matter here, only which files exist. Every wait is bounded (``LIMIT`` seconds)
so a hung process fails the test instead of hanging the suite.

``CURATE_TEST_SIGNAL=STEP:SIGNAL`` makes a run send itself SIGNAL at STEP (see
:mod:`curate.io.output_swap`): ``KILL`` for a kill at that exact point, ``STOP`` to
hold a run there while the test starts another.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from collections.abc import Sequence
from pathlib import Path

from sklearn.datasets import load_iris

import curate

LIMIT = 120.0
ROOT = Path(curate.__file__).resolve().parents[1]


def write_tables(folder: Path) -> None:
    """``small.csv`` (60 rows, two classes) and ``large.csv`` (all 150 rows) with their
    pipeline files ``small.toml`` and ``large.toml``, both writing ``folder/run``."""
    frame = load_iris(as_frame=True).frame
    frame.iloc[list(range(30)) + list(range(120, 150))].to_csv(folder / "small.csv", index=False)
    frame.to_csv(folder / "large.csv", index=False)
    for name in ("small", "large"):
        (folder / f"{name}.toml").write_text(
            f'[input]\npath = "{name}.csv"\nlabel = "target"\n'
            '[[stages]]\nmethod = "exact-duplicates"\n'
            '[output]\nfolder = "run"\nreport = false\n')


def rows_in(run: Path) -> int:
    """The ``rows_in`` of a run folder's summary: tells the small run from the large one."""
    return int(json.loads((run / "summary.json").read_text())["rows_in"])


def leftovers(folder: Path) -> list[str]:
    """Entries curate writes beside an output while it works: locks, partials, journals."""
    return sorted(p.name for p in folder.iterdir() if p.name.startswith(".run."))


def _env(signal_at: str | None, extra: dict[str, str] | None) -> dict[str, str]:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    env.pop("CURATE_TEST_SIGNAL", None)
    if signal_at:
        env["CURATE_TEST_SIGNAL"] = signal_at
    return env | (extra or {})


def curate_run(args: Sequence[str], cwd: Path, signal_at: str | None = None,
               env: dict[str, str] | None = None) -> subprocess.CompletedProcess[str]:
    """Run ``python -m curate ARGS`` to its end (bounded by ``LIMIT``)."""
    return subprocess.run([sys.executable, "-m", "curate", *args], cwd=cwd, text=True,
                          capture_output=True, env=_env(signal_at, env), timeout=LIMIT,
                          check=False)


def start(args: Sequence[str], cwd: Path, signal_at: str) -> subprocess.Popen[str]:
    """Start ``python -m curate ARGS`` in the background with a signal point set."""
    return subprocess.Popen([sys.executable, "-m", "curate", *args], cwd=cwd, text=True,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            env=_env(signal_at, None))


def wait_stopped(proc: subprocess.Popen[str]) -> None:
    """Wait until ``proc`` has stopped itself (SIGSTOP), without reaping it."""
    deadline = time.monotonic() + LIMIT
    while time.monotonic() < deadline:
        pid, status = os.waitpid(proc.pid, os.WUNTRACED | os.WNOHANG)
        if pid and os.WIFSTOPPED(status):
            return
        assert not pid, f"the run ended before its stop point: status {status}"
        time.sleep(0.05)
    proc.kill()
    raise AssertionError(f"the run did not reach its stop point in {LIMIT} s")


def resume(proc: subprocess.Popen[str]) -> tuple[int, str]:
    """Let a stopped run go on; return its exit code and stderr."""
    os.kill(proc.pid, signal.SIGCONT)
    _, err = proc.communicate(timeout=LIMIT)
    return proc.returncode, err
