"""Shared pieces of the benchmark scripts: data, timing, peak memory.

``make_data`` draws scikit-learn's ``make_classification`` problem (half the
columns informative, seeded) and range-normalises it, the default scaling of
curate's space. ``measure`` runs one call and reports wall time, CPU time and
the peak resident memory it added (Linux: the kernel's peak counter is reset
through ``/proc/self/clear_refs`` just before the call, then read from
``VmHWM``; elsewhere Python's tracemalloc, which sees numpy's buffers only).

The machine may be shared: outside load stretches wall times, multi-threaded
code most. Compare ratios measured in one run, and say what the load was
(``load_note``).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
import threading
import time
import tracemalloc
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

__all__ = ["Child", "Measurement", "load_note", "make_data", "measure", "run_child",
           "scratch_folder", "target_line"]


def make_data(rows: int, cols: int = 20, classes: int = 3,
              seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """Features in [0, 1] (float64, C order) and integer labels 0..classes-1.

    Examples
    --------
    >>> X, y = make_data(100, cols=5, seed=1)
    >>> X.shape, float(X.min()), float(X.max()), sorted(set(y.tolist()))
    ((100, 5), 0.0, 1.0, [0, 1, 2])
    """
    from sklearn.datasets import make_classification
    from sklearn.preprocessing import MinMaxScaler

    # scikit-learn needs 2 ** informative >= 2 * classes (two clusters per class)
    informative = min(cols, max(cols // 2, int(np.ceil(np.log2(2 * classes)))))
    X, y = make_classification(n_samples=rows, n_features=cols, n_informative=informative,
                               n_redundant=min(2, cols - informative), n_classes=classes,
                               random_state=seed)
    return np.ascontiguousarray(MinMaxScaler().fit_transform(X)), np.asarray(y)


@dataclass(frozen=True)
class Measurement:
    """One measured call: its result, wall and CPU seconds, and peak memory it added (MiB)."""

    result: Any
    seconds: float
    cpu_seconds: float
    peak_mb: float


def _status_mb(key: str) -> float | None:
    try:
        with open("/proc/self/status") as status:
            for line in status:
                if line.startswith(key + ":"):
                    return int(line.split()[1]) / 1024
    except OSError:
        return None
    return None


def _reset_peak() -> bool:
    try:
        with open("/proc/self/clear_refs", "w") as clear:
            clear.write("5")  # "5" resets the peak resident set size (Linux >= 4.0)
    except OSError:
        return False
    return True


def measure(func: Callable[..., Any], *args: Any, **kwargs: Any) -> Measurement:
    """Run ``func(*args, **kwargs)`` once; time it and take its added peak memory.

    Examples
    --------
    >>> m = measure(np.ones, 1_000_000)
    >>> m.result.shape, m.seconds >= 0, m.peak_mb >= 0
    ((1000000,), True, True)
    """
    before = _status_mb("VmRSS")
    kernel = before is not None and _reset_peak()
    if not kernel:
        tracemalloc.start()
    wall, cpu = time.perf_counter(), time.process_time()
    result = func(*args, **kwargs)
    wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
    if kernel:
        peak = (_status_mb("VmHWM") or 0.0) - (before or 0.0)
    else:
        peak = tracemalloc.get_traced_memory()[1] / 2**20
        tracemalloc.stop()
    return Measurement(result, wall, cpu, max(0.0, peak))


def load_note() -> str:
    """The machine's load averages and cores, to print beside the figures.

    Examples
    --------
    >>> "load" in load_note()
    True
    """
    one, five, _ = os.getloadavg()
    return f"load {one:.1f} (1 min), {five:.1f} (5 min) on {os.cpu_count()} cores"


def target_line(name: str, met: bool, detail: str) -> str:
    """One clear verdict line per target.

    Examples
    --------
    >>> target_line("2x faster", True, "ratio 2.5")
    'TARGET 2x faster: met (ratio 2.5)'
    """
    return f"TARGET {name}: {'met' if met else 'NOT met'} ({detail})"


@dataclass(frozen=True)
class Child:
    """One child process as measured from outside: wall seconds, its own peak resident MiB,
    and its exit code."""

    seconds: float
    peak_mb: float
    code: int


def _pump(stream: Any, prefix: str) -> None:
    for line in iter(stream.readline, ""):
        print(f"{prefix}{line}", end="", flush=True)


def run_child(cmd: list[str], prefix: str, timeout: float, cwd: Path | None = None) -> Child:
    """Run ``cmd``, echo its output with ``prefix``, and measure it alone.

    ``os.wait4`` returns the resource usage of that one child, so its
    ``ru_maxrss`` (KiB on Linux) is the child's own peak, whatever ran before.
    A child still running after ``timeout`` seconds is killed.

    Examples
    --------
    >>> import sys
    >>> child = run_child([sys.executable, "-c", "print('hi')"], "  ", 60)
    hi
    >>> child.code, child.seconds > 0
    (0, True)
    """
    print("$ " + " ".join(cmd), flush=True)
    start = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True,
                            cwd=cwd)
    pump = threading.Thread(target=_pump, args=(proc.stdout, prefix), daemon=True)
    pump.start()
    while True:
        pid, status, usage = os.wait4(proc.pid, os.WNOHANG)
        if pid:
            break
        if time.perf_counter() - start > timeout:
            print(f"{prefix}stopped after {timeout:.0f} s (--timeout)", flush=True)
            proc.kill()
            pid, status, usage = os.wait4(proc.pid, 0)
            break
        time.sleep(0.2)
    seconds = time.perf_counter() - start
    proc.returncode = os.waitstatus_to_exitcode(status)  # reaped here, not by Popen
    pump.join(timeout=5)
    if proc.stdout is not None:
        proc.stdout.close()
    return Child(seconds, usage.ru_maxrss / 1024, proc.returncode)


@contextmanager
def scratch_folder(prefix: str, keep: bool) -> Iterator[Path]:
    """A temporary folder for a benchmark's files, removed at the end unless ``keep``.

    Examples
    --------
    >>> with scratch_folder("curate-doc-", keep=False) as folder:
    ...     folder.is_dir()
    True
    >>> folder.exists()
    False
    """
    folder = Path(tempfile.mkdtemp(prefix=prefix))
    try:
        yield folder
    finally:
        if keep:
            print(f"kept {folder}")
        else:
            shutil.rmtree(folder, ignore_errors=True)
